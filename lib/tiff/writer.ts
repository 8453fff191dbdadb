/**
 * Plain TIFF writer: 8/16-bit unsigned grayscale, little-endian, classic TIFF or BigTIFF, strips,
 * no compression or Deflate with optional horizontal differencing, ImageDescription on IFD 0.
 * Sources: TIFF Revision 6.0 (Adobe, 1992) sections 2 (structure), 8 (baseline fields) and 14
 * (Predictor); Deflate as compression 8 over zlib (RFC 1950) per Adobe's Photoshop TIFF Technical
 * Notes (2002, from memory); BigTIFF (libtiff.org BigTIFF design, 2004): version 43, 8-byte offsets, LONG8.
 *
 * No DOM and no node imports, so the browser can write files too. Layout per plane is
 * [strips][IFD + its out-of-line values]; each IFD's position is computed before it is written and
 * its next-IFD offset once the next plane is encoded, so nothing is ever patched and only one
 * encoded plane is held in memory.
 */

export type TiffSink = (chunk: Uint8Array) => void | Promise<void>;

export interface TiffWriteOptions {
  width: number;
  height: number;
  bitsPerSample: 8 | 16;
  /** BigTIFF (version 43, 8-byte offsets): needed past 4 GiB. Default false. */
  bigTiff?: boolean;
  /** Rows per strip; default gives strips of about 64 KiB (one read window of byte-source.ts). */
  rowsPerStrip?: number;
  /** Default "none". "deflate" writes compression code 8 and needs `compress`. */
  compression?: "none" | "deflate";
  /** zlib-format Deflate (RFC 1950), e.g. node's zlib.deflateSync; injected so this module stays browser-safe. */
  compress?: (bytes: Uint8Array) => Uint8Array;
  /** Horizontal differencing, TIFF 6.0 Predictor 2. Only with compression (it gains nothing uncompressed). */
  predictor?: boolean;
  /** ImageDescription (tag 270) of the first IFD, e.g. OME-XML. Written as UTF-8 with a NUL. */
  description?: string;
}

export interface TiffWriteResult {
  bytesWritten: number;
  /** Byte offset of each plane's IFD, in order: what an ingest would store. */
  ifdOffsets: number[];
}

export interface TiffWriter {
  /** Appends one plane (row-major, width × height values). Await it before passing the next. */
  addPlane(pixels: Uint8Array | Uint16Array): Promise<void>;
  /** Writes the last IFD (next offset 0) and returns the layout. */
  finish(): Promise<TiffWriteResult>;
}

export class TiffWriteError extends Error {
  override name = "TiffWriteError";
}

// Field types (TIFF 6.0 section 2; BigTIFF adds 16 LONG8).
const SHORT = 3;
const LONG = 4;
const RATIONAL = 5;
const ASCII = 2;
const LONG8 = 16;
const TYPE_SIZE: Record<number, number> = { [ASCII]: 1, [SHORT]: 2, [LONG]: 4, [RATIONAL]: 8, [LONG8]: 8 };

interface Entry {
  tag: number;
  type: number;
  /** Numbers for SHORT/LONG/LONG8, [numerator, denominator] pairs flattened for RATIONAL. */
  values: number[] | Uint8Array;
}

const CLASSIC_LIMIT = 2 ** 32 - 1;
const HOST_LITTLE_ENDIAN = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;

/** Default rows per strip: about 64 KiB per strip (common practice is 8–64 KiB strips), at least one row. */
export function defaultRowsPerStrip(width: number, bitsPerSample: 8 | 16): number {
  return Math.max(1, Math.floor(65536 / (width * (bitsPerSample / 8))));
}

function checkOptions(o: TiffWriteOptions): void {
  for (const [k, v] of [["width", o.width], ["height", o.height]] as const) {
    if (!Number.isInteger(v) || v < 1 || v > CLASSIC_LIMIT) throw new TiffWriteError(`${k} must be a whole number ≥ 1, got ${v}`);
  }
  if (o.bitsPerSample !== 8 && o.bitsPerSample !== 16) throw new TiffWriteError(`bitsPerSample must be 8 or 16, got ${o.bitsPerSample}`);
  if (o.rowsPerStrip !== undefined && (!Number.isInteger(o.rowsPerStrip) || o.rowsPerStrip < 1)) {
    throw new TiffWriteError(`rowsPerStrip must be a whole number ≥ 1, got ${o.rowsPerStrip}`);
  }
  if (o.compression === "deflate" && !o.compress) throw new TiffWriteError("Deflate compression needs a compress(bytes) function");
  if (o.predictor && o.compression !== "deflate") throw new TiffWriteError("The horizontal predictor is only written with Deflate compression");
}

/** Encodes one strip: little-endian samples, optional differencing (modulo 2^bits), optional Deflate. */
function encodeStrip(pixels: Uint8Array | Uint16Array, start: number, count: number, width: number, o: TiffWriteOptions): Uint8Array {
  let raw: Uint8Array;
  if (o.bitsPerSample === 8) {
    raw = o.predictor ? new Uint8Array(count) : (pixels as Uint8Array).subarray(start, start + count);
    if (o.predictor) {
      for (let i = 0; i < count; i++) {
        const s = start + i;
        raw[i] = i % width === 0 ? pixels[s] : (pixels[s] - pixels[s - 1]) & 0xff;
      }
    }
  } else {
    const src = pixels as Uint16Array;
    let values = src.subarray(start, start + count);
    if (o.predictor) {
      values = new Uint16Array(count);
      for (let row = 0; row < count; row += width) {
        values[row] = src[start + row];
        for (let x = 1; x < width; x++) values[row + x] = (src[start + row + x] - src[start + row + x - 1]) & 0xffff;
      }
    }
    if (HOST_LITTLE_ENDIAN) {
      raw = new Uint8Array(values.buffer, values.byteOffset, values.byteLength);
    } else {
      raw = new Uint8Array(count * 2);
      const view = new DataView(raw.buffer);
      for (let i = 0; i < count; i++) view.setUint16(i * 2, values[i], true);
    }
  }
  return o.compression === "deflate" ? (o.compress as (b: Uint8Array) => Uint8Array)(raw) : raw;
}

/**
 * Serialises one IFD starting at `at` (a word boundary): entry count, entries sorted by tag, next-IFD
 * offset, then the values too large for an entry, each on a word boundary (TIFF 6.0 section 2).
 */
function encodeIfd(entries: Entry[], at: number, next: number, bigTiff: boolean): Uint8Array {
  entries.sort((a, b) => a.tag - b.tag);
  const countSize = bigTiff ? 8 : 2;
  const entrySize = bigTiff ? 20 : 12;
  const offsetSize = bigTiff ? 8 : 4;
  const inlineSize = bigTiff ? 8 : 4;
  const tableSize = countSize + entries.length * entrySize + offsetSize;
  const sizes = entries.map((e) => valueCount(e) * TYPE_SIZE[e.type]);
  let extra = 0;
  const placed = sizes.map((s) => {
    if (s <= inlineSize) return -1;
    const pos = tableSize + extra;
    extra += s + (s % 2);
    return pos;
  });
  const out = new Uint8Array(tableSize + extra);
  const v = new DataView(out.buffer);
  const putOffset = (pos: number, value: number) => {
    if (bigTiff) v.setBigUint64(pos, BigInt(value), true);
    else v.setUint32(pos, value, true);
  };
  if (bigTiff) v.setBigUint64(0, BigInt(entries.length), true);
  else v.setUint16(0, entries.length, true);
  entries.forEach((e, i) => {
    const pos = countSize + i * entrySize;
    const count = valueCount(e);
    v.setUint16(pos, e.tag, true);
    v.setUint16(pos + 2, e.type, true);
    putOffset(pos + 4, count);
    const valuePos = pos + 4 + offsetSize;
    let dst = valuePos;
    if (placed[i] >= 0) {
      putOffset(valuePos, at + placed[i]);
      dst = placed[i];
    }
    if (e.values instanceof Uint8Array) {
      out.set(e.values, dst);
      return;
    }
    const size = e.type === RATIONAL ? 4 : TYPE_SIZE[e.type];
    e.values.forEach((n, j) => {
      const p = dst + j * size;
      if (e.type === SHORT) v.setUint16(p, n, true);
      else if (e.type === LONG || e.type === RATIONAL) v.setUint32(p, n, true);
      else v.setBigUint64(p, BigInt(n), true);
    });
  });
  putOffset(countSize + entries.length * entrySize, next);
  return out;
}

/** The tags of one plane's IFD; `first` adds the ImageDescription. */
function planeEntries(o: TiffWriteOptions, rowsPerStrip: number, offsets: number[], counts: number[], description: Uint8Array | null): Entry[] {
  const offsetType = o.bigTiff ? LONG8 : LONG;
  const entries: Entry[] = [
    { tag: 254, type: LONG, values: [0] },
    { tag: 256, type: LONG, values: [o.width] },
    { tag: 257, type: LONG, values: [o.height] },
    { tag: 258, type: SHORT, values: [o.bitsPerSample] },
    { tag: 259, type: SHORT, values: [o.compression === "deflate" ? 8 : 1] },
    // 262 = 1 BlackIsZero; 277/284 one sample, contiguous; 339 = 1 unsigned integers.
    { tag: 262, type: SHORT, values: [1] },
    { tag: 273, type: offsetType, values: offsets },
    { tag: 277, type: SHORT, values: [1] },
    { tag: 278, type: LONG, values: [rowsPerStrip] },
    { tag: 279, type: offsetType, values: counts },
    // Resolution fields are required by baseline TIFF 6.0; unit 1 = no absolute unit (OME-XML carries µm).
    { tag: 282, type: RATIONAL, values: [1, 1] },
    { tag: 283, type: RATIONAL, values: [1, 1] },
    { tag: 284, type: SHORT, values: [1] },
    { tag: 296, type: SHORT, values: [1] },
    { tag: 339, type: SHORT, values: [1] },
  ];
  if (o.predictor) entries.push({ tag: 317, type: SHORT, values: [2] });
  if (description) entries.push({ tag: 270, type: ASCII, values: description });
  return entries;
}

function valueCount(e: Entry): number {
  return e.values instanceof Uint8Array ? e.values.length : e.type === RATIONAL ? e.values.length / 2 : e.values.length;
}

/** Bytes of an IFD with its out-of-line values, as encodeIfd lays it out. */
function ifdSize(entries: Entry[], bigTiff: boolean): number {
  const inlineSize = bigTiff ? 8 : 4;
  let size = (bigTiff ? 16 : 6) + entries.length * (bigTiff ? 20 : 12);
  for (const e of entries) {
    const s = valueCount(e) * TYPE_SIZE[e.type];
    if (s > inlineSize) size += s + (s % 2);
  }
  return size;
}

/** Starts a TIFF on `sink`. Nothing is written until the first plane arrives (its size sets the first IFD offset). */
export function createTiffWriter(sink: TiffSink, options: TiffWriteOptions): TiffWriter {
  checkOptions(options);
  const o = options;
  const bigTiff = o.bigTiff ?? false;
  const { width, height } = o;
  const rowsPerStrip = Math.min(o.rowsPerStrip ?? defaultRowsPerStrip(width, o.bitsPerSample), height);
  const stripCount = Math.ceil(height / rowsPerStrip);
  const align = bigTiff ? 8 : 2;
  const description = o.description === undefined ? null : new TextEncoder().encode(`${o.description}\0`);

  let position = 0;
  let planes = 0;
  let finished = false;
  let busy = false;
  const ifdOffsets: number[] = [];
  // The previous plane's IFD waits until the next plane is encoded, so its next offset is known.
  let pending: { entries: Entry[] } | null = null;

  const emit = async (chunk: Uint8Array) => {
    if (chunk.length === 0) return;
    position += chunk.length;
    if (!bigTiff && position > CLASSIC_LIMIT) {
      throw new TiffWriteError(`The file passed 4 GiB, the limit of classic TIFF's 32-bit offsets; write it as BigTIFF`);
    }
    await sink(chunk);
  };
  const padding = (pos: number) => (align - (pos % align)) % align;

  async function writePendingIfd(nextIfd: number): Promise<void> {
    if (!pending) return;
    await emit(new Uint8Array(padding(position)));
    ifdOffsets.push(position);
    await emit(encodeIfd(pending.entries, position, nextIfd, bigTiff));
    pending = null;
  }

  return {
    async addPlane(pixels) {
      if (finished) throw new TiffWriteError("addPlane after finish");
      if (busy) throw new TiffWriteError("addPlane called before the previous call finished; await each plane");
      const expectedType = o.bitsPerSample === 16 ? Uint16Array : Uint8Array;
      if (!(pixels instanceof expectedType)) throw new TiffWriteError(`A ${o.bitsPerSample}-bit plane must be a ${expectedType.name}`);
      if (pixels.length !== width * height) {
        throw new TiffWriteError(`Plane ${planes} holds ${pixels.length} values; ${width} × ${height} = ${width * height} expected`);
      }
      busy = true;
      try {
        const strips: Uint8Array[] = [];
        for (let s = 0; s < stripCount; s++) {
          const rows = Math.min(rowsPerStrip, height - s * rowsPerStrip);
          strips.push(encodeStrip(pixels, s * rowsPerStrip * width, rows * width, width, o));
        }
        const stripBytes = strips.reduce((n, b) => n + b.length, 0);
        if (planes === 0) {
          const headerSize = bigTiff ? 16 : 8;
          const firstIfd = headerSize + stripBytes + padding(headerSize + stripBytes);
          const header = new Uint8Array(headerSize);
          const v = new DataView(header.buffer);
          v.setUint16(0, 0x4949, false); // "II": little-endian
          if (bigTiff) {
            v.setUint16(2, 43, true);
            v.setUint16(4, 8, true); // bytes per offset
            v.setBigUint64(8, BigInt(firstIfd), true);
          } else {
            v.setUint16(2, 42, true);
            v.setUint32(4, firstIfd, true);
          }
          await emit(header);
        } else {
          // This plane's strips start right after the previous IFD; its IFD follows them.
          const prevIfd = position + padding(position);
          const stripsStart = prevIfd + ifdSize((pending as { entries: Entry[] }).entries, bigTiff);
          const nextIfd = stripsStart + stripBytes + padding(stripsStart + stripBytes);
          await writePendingIfd(nextIfd);
        }
        const offsets: number[] = [];
        for (const strip of strips) {
          offsets.push(position);
          await emit(strip);
        }
        const counts = strips.map((b) => b.length);
        pending = { entries: planeEntries(o, rowsPerStrip, offsets, counts, planes === 0 ? description : null) };
        planes++;
      } finally {
        busy = false;
      }
    },
    async finish() {
      if (finished) throw new TiffWriteError("finish called twice");
      if (planes === 0) throw new TiffWriteError("A TIFF needs at least one plane");
      finished = true;
      await writePendingIfd(0);
      return { bytesWritten: position, ifdOffsets };
    },
  };
}

/** Writes a whole TIFF in memory (tests, small files, the browser). */
export async function writeTiff(planes: readonly (Uint8Array | Uint16Array)[], options: TiffWriteOptions): Promise<Uint8Array> {
  const chunks: Uint8Array[] = [];
  const writer = createTiffWriter((c) => {
    // Copy: an uncompressed strip may be a view of the caller's plane.
    chunks.push(c.slice());
  }, options);
  for (const p of planes) await writer.addPlane(p);
  const { bytesWritten } = await writer.finish();
  const out = new Uint8Array(bytesWritten);
  let at = 0;
  for (const c of chunks) {
    out.set(c, at);
    at += c.length;
  }
  return out;
}

/**
 * Size in bytes of an uncompressed file with these options, without writing it (the demo generator
 * uses it to skip files already complete). Same layout arithmetic as createTiffWriter.
 */
export function uncompressedTiffSize(planeCount: number, options: Omit<TiffWriteOptions, "compression" | "compress" | "predictor">): number {
  const o: TiffWriteOptions = { ...options, compression: "none" };
  checkOptions(o);
  const align = o.bigTiff ? 8 : 2;
  const rowsPerStrip = Math.min(o.rowsPerStrip ?? defaultRowsPerStrip(o.width, o.bitsPerSample), o.height);
  const zeros = new Array<number>(Math.ceil(o.height / rowsPerStrip)).fill(0);
  const description = o.description === undefined ? null : new TextEncoder().encode(`${o.description}\0`);
  let size = o.bigTiff ? 16 : 8;
  for (let p = 0; p < planeCount; p++) {
    size += o.width * o.height * (o.bitsPerSample / 8);
    size += (align - (size % align)) % align;
    size += ifdSize(planeEntries(o, rowsPerStrip, zeros, zeros, p === 0 ? description : null), !!o.bigTiff);
  }
  return size;
}

export type OmeDimensionOrder = "XYZCT" | "XYZTC" | "XYCTZ" | "XYCZT" | "XYTCZ" | "XYTZC";

export interface OmeXmlChannel {
  name: string;
  /** Nanometres. */
  emissionWavelength?: number;
  /** "#rrggbb"; written as OME's signed 32-bit RGBA with alpha 255. */
  color?: string;
}

export interface OmeXmlInput {
  name?: string;
  sizeX: number;
  sizeY: number;
  sizeZ: number;
  sizeC: number;
  sizeT: number;
  /** Planes are stored in this order, the letter after XY varying fastest (OME-XML 2016-06). */
  order: OmeDimensionOrder;
  type: "uint8" | "uint16";
  significantBits?: number;
  /** Micrometres per pixel and per z step (the schema's default unit, so no unit attribute is written). */
  physicalSizeX?: number;
  physicalSizeY?: number;
  physicalSizeZ?: number;
  /** Seconds between time points; also sets each Plane's DeltaT. */
  timeIncrement?: number;
  channels: OmeXmlChannel[];
}

/**
 * Escapes an attribute value. Non-ASCII stays UTF-8 (as OME-TIFF files commonly carry it and
 * structure.ts decodes it): ome.ts's parser does not expand numeric character references.
 */
function xmlAttr(value: string): string {
  return value.replace(/[&<>"\x00-\x1f]/g, (ch) => (ch === "&" ? "&amp;" : ch === "<" ? "&lt;" : ch === ">" ? "&gt;" : ch === '"' ? "&quot;" : " "));
}

/** "#rrggbb" → OME Color: RGBA packed into a signed 32-bit integer, red in the top byte. */
export function hexToOmeColour(hex: string): number {
  const m = /^#([0-9a-fA-F]{6})$/.exec(hex);
  if (!m) throw new TiffWriteError(`Colour must be "#rrggbb", got "${hex}"`);
  return ((parseInt(m[1], 16) << 8) | 0xff) | 0;
}

function positive(name: string, v: number | undefined): string {
  if (v === undefined) return "";
  if (!(Number.isFinite(v) && v > 0)) throw new TiffWriteError(`${name} must be a positive number, got ${v}`);
  return ` ${name}="${v}"`;
}

/**
 * OME-XML for a single-file OME-TIFF whose IFDs hold the planes in `order` (Open Microscopy
 * Environment schema 2016-06: OME > Image > Pixels > Channel*, TiffData, Plane*).
 */
export function omeXml(input: OmeXmlInput): string {
  const { sizeX, sizeY, sizeZ, sizeC, sizeT, order } = input;
  for (const [k, v] of Object.entries({ sizeX, sizeY, sizeZ, sizeC, sizeT })) {
    if (!Number.isInteger(v) || v < 1) throw new TiffWriteError(`${k} must be a whole number ≥ 1, got ${v}`);
  }
  if (input.channels.length !== sizeC) throw new TiffWriteError(`${input.channels.length} channels described; SizeC is ${sizeC}`);
  const planeCount = sizeZ * sizeC * sizeT;
  const pixelsAttrs =
    ` ID="Pixels:0" DimensionOrder="${order}" Type="${input.type}"` +
    (input.significantBits === undefined ? "" : ` SignificantBits="${input.significantBits}"`) +
    ` BigEndian="false" Interleaved="false"` +
    ` SizeX="${sizeX}" SizeY="${sizeY}" SizeZ="${sizeZ}" SizeC="${sizeC}" SizeT="${sizeT}"` +
    positive("PhysicalSizeX", input.physicalSizeX) +
    positive("PhysicalSizeY", input.physicalSizeY) +
    positive("PhysicalSizeZ", input.physicalSizeZ) +
    positive("TimeIncrement", input.timeIncrement);
  const channels = input.channels.map(
    (ch, c) =>
      `      <Channel ID="Channel:0:${c}" Name="${xmlAttr(ch.name)}" SamplesPerPixel="1"` +
      (ch.color === undefined ? "" : ` Color="${hexToOmeColour(ch.color)}"`) +
      positive("EmissionWavelength", ch.emissionWavelength) +
      "/>",
  );
  const sizes: Record<string, number> = { Z: sizeZ, C: sizeC, T: sizeT };
  const planes: string[] = [];
  for (let i = 0; i < planeCount; i++) {
    const coord: Record<string, number> = {};
    let rest = i;
    for (const axis of order.slice(2)) {
      coord[axis] = rest % sizes[axis];
      rest = Math.floor(rest / sizes[axis]);
    }
    const deltaT = input.timeIncrement === undefined ? "" : ` DeltaT="${coord.T * input.timeIncrement}"`;
    planes.push(`      <Plane TheZ="${coord.Z}" TheT="${coord.T}" TheC="${coord.C}"${deltaT}/>`);
  }
  const ns = "http://www.openmicroscopy.org/Schemas/OME/2016-06";
  return [
    `<?xml version="1.0" encoding="UTF-8"?>`,
    `<OME xmlns="${ns}" xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance" xsi:schemaLocation="${ns} ${ns}/ome.xsd">`,
    `  <Image ID="Image:0"${input.name === undefined ? "" : ` Name="${xmlAttr(input.name)}"`}>`,
    `    <Pixels${pixelsAttrs}>`,
    ...channels,
    `      <TiffData IFD="0" PlaneCount="${planeCount}"/>`,
    ...planes,
    `    </Pixels>`,
    `  </Image>`,
    `</OME>`,
  ].join("\n");
}
