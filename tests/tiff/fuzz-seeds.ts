// Small valid TIFFs for the fuzz tests, built byte by byte per TIFF 6.0 (sections 2 and 8) and the
// BigTIFF layout (version 43, 8-byte offsets, LONG8 = type 16). The builder also reports where it put
// the metadata and the pixel data, so tests can check which bytes a reader touched.

export interface PlaneInput {
  /** Row-major values; 8-bit planes as Uint8Array, 16-bit as Uint16Array, float as Float32Array. */
  data: Uint8Array | Uint16Array | Float32Array;
}

export interface BuildOptions {
  width: number;
  height: number;
  bits: 8 | 16 | 32;
  planes: PlaneInput[];
  littleEndian?: boolean;
  bigTiff?: boolean;
  rowsPerStrip?: number;
  /** ImageDescription of IFD 0. */
  description?: string;
  /** Put each IFD before its strips (as many writers do) rather than after them. */
  ifdFirst?: boolean;
}

export interface BuiltTiff {
  bytes: Uint8Array;
  ifdOffsets: number[];
  /** [start, end) ranges of header, IFDs and out-of-line tag values. */
  metadata: [number, number][];
  /** [start, end) of each strip, per plane. */
  strips: [number, number][][];
}

interface Field {
  tag: number;
  type: 2 | 3 | 4 | 16;
  values: number[] | Uint8Array;
}

const TYPE_SIZE = { 2: 1, 3: 2, 4: 4, 16: 8 } as const;

function fieldBytes(f: Field): number {
  return TYPE_SIZE[f.type] * f.values.length;
}

function writeValues(v: DataView, at: number, f: Field, le: boolean): void {
  if (f.values instanceof Uint8Array) {
    new Uint8Array(v.buffer, v.byteOffset + at, f.values.length).set(f.values);
    return;
  }
  f.values.forEach((n, i) => {
    const p = at + i * TYPE_SIZE[f.type];
    if (f.type === 3) v.setUint16(p, n, le);
    else if (f.type === 4) v.setUint32(p, n, le);
    else v.setBigUint64(p, BigInt(n), le);
  });
}

function planeBytes(data: PlaneInput["data"], le: boolean): Uint8Array {
  const out = new Uint8Array(data.byteLength);
  const v = new DataView(out.buffer);
  for (let i = 0; i < data.length; i++) {
    if (data instanceof Uint8Array) out[i] = data[i];
    else if (data instanceof Uint16Array) v.setUint16(i * 2, data[i], le);
    else v.setFloat32(i * 4, data[i], le);
  }
  return out;
}

/** Uncompressed strips, one sample per pixel; layout per plane is [strips][IFD][values] or [IFD][values][strips]. */
export function buildTiff(o: BuildOptions): BuiltTiff {
  const le = o.littleEndian ?? true;
  const big = o.bigTiff ?? false;
  const rowsPerStrip = Math.min(o.rowsPerStrip ?? o.height, o.height);
  const bytesPerValue = o.bits / 8;
  const rowBytes = o.width * bytesPerValue;
  const stripCount = Math.ceil(o.height / rowsPerStrip);
  const stripLengths = Array.from({ length: stripCount }, (_, s) => Math.min(rowsPerStrip, o.height - s * rowsPerStrip) * rowBytes);
  const planeSize = o.width * o.height * bytesPerValue;
  const offType = big ? 16 : 4;
  const inlineSize = big ? 8 : 4;
  const entrySize = big ? 20 : 12;
  const countSize = big ? 8 : 2;
  const headerSize = big ? 16 : 8;

  const fieldsFor = (p: number, stripOffsets: number[]): Field[] => {
    const fields: Field[] = [
      { tag: 256, type: 4, values: [o.width] },
      { tag: 257, type: 4, values: [o.height] },
      { tag: 258, type: 3, values: [o.bits] },
      { tag: 259, type: 3, values: [1] },
      { tag: 262, type: 3, values: [1] },
    ];
    if (p === 0 && o.description !== undefined) {
      fields.push({ tag: 270, type: 2, values: new TextEncoder().encode(`${o.description}\0`) });
    }
    fields.push(
      { tag: 273, type: offType, values: stripOffsets },
      { tag: 277, type: 3, values: [1] },
      { tag: 278, type: 4, values: [rowsPerStrip] },
      { tag: 279, type: offType, values: stripLengths },
    );
    if (o.bits === 32) fields.push({ tag: 339, type: 3, values: [3] });
    return fields;
  };
  const even = (n: number) => n + (n & 1);
  // Sizes do not depend on the offsets' values, so a first pass with dummy offsets lays out the file.
  const ifdBlockSize = (fields: Field[]) =>
    countSize + fields.length * entrySize + inlineSize + fields.reduce((n, f) => n + (fieldBytes(f) > inlineSize ? even(fieldBytes(f)) : 0), 0);

  const chunks: { at: number; bytes?: Uint8Array; fields?: Field[]; next?: number }[] = [];
  const metadata: [number, number][] = [[0, headerSize]];
  const strips: [number, number][][] = [];
  const ifdOffsets: number[] = [];
  let pos = headerSize;
  o.planes.forEach((plane, p) => {
    const dummy = fieldsFor(p, new Array<number>(stripCount).fill(0));
    const ifdSize = ifdBlockSize(dummy);
    const ifdAt = o.ifdFirst ? pos : pos + planeSize;
    const dataAt = o.ifdFirst ? even(pos + ifdSize) : pos;
    const offsets = stripLengths.map((_, s) => dataAt + s * rowsPerStrip * rowBytes);
    ifdOffsets.push(ifdAt);
    metadata.push([ifdAt, ifdAt + ifdSize]);
    strips.push(offsets.map((off, s) => [off, off + stripLengths[s]]));
    chunks.push({ at: dataAt, bytes: planeBytes(plane.data, le) });
    chunks.push({ at: ifdAt, fields: fieldsFor(p, offsets) });
    pos = even(o.ifdFirst ? dataAt + planeSize : ifdAt + ifdSize);
  });

  const bytes = new Uint8Array(pos);
  const v = new DataView(bytes.buffer);
  bytes.set(le ? [0x49, 0x49] : [0x4d, 0x4d]);
  v.setUint16(2, big ? 43 : 42, le);
  if (big) {
    v.setUint16(4, 8, le);
    v.setBigUint64(8, BigInt(ifdOffsets[0]), le);
  } else {
    v.setUint32(4, ifdOffsets[0], le);
  }
  let ifdIndex = 0;
  for (const c of chunks) {
    if (c.bytes) {
      bytes.set(c.bytes, c.at);
      continue;
    }
    const fields = c.fields!;
    const next = ifdOffsets[ifdIndex + 1] ?? 0;
    ifdIndex++;
    if (big) v.setBigUint64(c.at, BigInt(fields.length), le);
    else v.setUint16(c.at, fields.length, le);
    let extra = c.at + countSize + fields.length * entrySize + inlineSize;
    fields.forEach((f, i) => {
      const at = c.at + countSize + i * entrySize;
      v.setUint16(at, f.tag, le);
      v.setUint16(at + 2, f.type, le);
      if (big) v.setBigUint64(at + 4, BigInt(f.values.length), le);
      else v.setUint32(at + 4, f.values.length, le);
      const valueAt = at + (big ? 12 : 8);
      if (fieldBytes(f) <= inlineSize) {
        writeValues(v, valueAt, f, le);
      } else {
        if (big) v.setBigUint64(valueAt, BigInt(extra), le);
        else v.setUint32(valueAt, extra, le);
        writeValues(v, extra, f, le);
        extra += even(fieldBytes(f));
      }
    });
    const nextAt = c.at + countSize + fields.length * entrySize;
    if (big) v.setBigUint64(nextAt, BigInt(next), le);
    else v.setUint32(nextAt, next, le);
  }
  return { bytes, ifdOffsets, metadata, strips };
}

/** Deterministic test pattern that is neither constant nor random, so every codec has work to do. */
export function pattern(width: number, height: number, bits: 8 | 16 | 32, plane: number): PlaneInput["data"] {
  const n = width * height;
  const out = bits === 8 ? new Uint8Array(n) : bits === 16 ? new Uint16Array(n) : new Float32Array(n);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      const v = (x * 37 + y * 101 + plane * 997 + ((x * y) % 13) * 211) & 0xfff;
      out[y * width + x] = bits === 8 ? v & 0xff : bits === 16 ? v : v / 7 - 100;
    }
  }
  return out;
}
