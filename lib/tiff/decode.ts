import { getDecoder } from "geotiff";
import type { ByteSource } from "./byte-source";
import { lzwDecode } from "./lzw";
import { readIfdAt, readTiffHeader, TiffFormatError, type IfdInfo, type TiffHeader } from "./structure";

export interface DecodedPlane {
  width: number;
  height: number;
  /** Row-major raw values in the machine's byte order: exactly what the camera stored. */
  data: Uint8Array | Uint16Array | Float32Array;
}

export interface DecodeOptions {
  /** The header stored at ingest; saves one read. */
  header?: TiffHeader;
  signal?: AbortSignal;
  /**
   * A faster zlib inflate for Deflate blocks where one exists (Node's native zlib on the server);
   * without it geotiff's JavaScript inflate is used, as in the browser. `expectedBytes` is the
   * block's decoded size (a hint for output buffers). It may return a promise: an inflate running
   * off the main thread then overlaps other blocks' inflates and the caller's counting.
   */
  inflate?: Inflate;
  /**
   * Where the IFD and its tag arrays are read from, when not `source`: e.g. a read-ahead wrapper of
   * it (readAheadSource), so the several small metadata reads cost one request while pixel reads
   * still go straight to `source` and can be cancelled.
   */
  metadataSource?: ByteSource;
}

export type Inflate = (block: Uint8Array, expectedBytes: number) => Uint8Array | Promise<Uint8Array>;

const HOST_LITTLE_ENDIAN = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;

/** Largest plane or block decoded, in pixels: 2^28 (16384 × 16384, 512 MiB at 16 bits). */
export const MAX_PLANE_PIXELS = 2 ** 28;

// Reads of blocks closer than this are merged into one read (one HTTP range instead of many).
const MERGE_GAP = 4096;
const MERGE_MAX = 16 * 1024 * 1024;

// Decoded bytes of one plane's blocks allowed in flight at once (at least one block is always
// allowed). With an asynchronous inflate this many bytes' worth of blocks can be inflating at
// the same time; with a synchronous decoder it only bounds the results held before placement.
export const BLOCK_WINDOW_BYTES = 8 * 1024 * 1024;

/**
 * Decodes the plane whose IFD starts at `ifdOffset` (stored at ingest). Reads that one IFD and its
 * strips or tiles only, so the cost does not depend on the plane's position in the file.
 */
export async function decodePlane(source: ByteSource, ifdOffset: number, options: DecodeOptions = {}): Promise<DecodedPlane> {
  const header = options.header ?? (await readTiffHeader(source, options.signal));
  if (!Number.isSafeInteger(ifdOffset) || ifdOffset < 8 || ifdOffset >= source.size) {
    throw new TiffFormatError(`No IFD can start at byte ${ifdOffset} of a ${source.size}-byte file`);
  }
  const ifd = await readIfdAt(options.metadataSource ?? source, header, ifdOffset, { description: false, signal: options.signal });
  return decodeIfd(source, header, ifd, options.signal, options.inflate);
}

/**
 * Decodes a plane from an IFD already read. The IFD is parsed by structure.ts rather than geotiff's
 * parser because geotiff 3.0.5 reads deferred tag arrays as little-endian and applies the predictor
 * in file byte order, which breaks big-endian files. geotiff supplies the Deflate codec; LZW and
 * PackBits are decoded here (lzw.ts, unpackBits).
 */
export async function decodeIfd(
  source: ByteSource,
  header: TiffHeader,
  ifd: IfdInfo,
  signal?: AbortSignal,
  inflate?: DecodeOptions["inflate"],
): Promise<DecodedPlane> {
  if (!ifd.supported) throw new TiffFormatError(`The plane at byte ${ifd.offset} cannot be decoded: ${ifd.unsupportedReason}`);
  const { width, height, layout } = ifd;
  // A few header bytes can claim 65535 × 65535 with unwritten (zero-length) strips: refuse before allocating.
  const blockPixels = layout.kind === "tiles" ? layout.tileWidth * layout.tileLength : width * layout.rowsPerStrip;
  if (width * height > MAX_PLANE_PIXELS || blockPixels > MAX_PLANE_PIXELS) {
    throw new TiffFormatError(
      `The plane at byte ${ifd.offset} is ${width} × ${height} pixels${layout.kind === "tiles" ? ` in ${layout.tileWidth} × ${layout.tileLength} tiles` : ""}; planes and blocks above ${MAX_PLANE_PIXELS} pixels are not decoded`,
    );
  }
  const bits = ifd.bitsPerSample[0];
  const float = ifd.sampleFormat[0] === 3;
  const bytesPerValue = bits / 8;

  const blockWidth = layout.kind === "tiles" ? layout.tileWidth : width;
  const blockRows = layout.kind === "tiles" ? layout.tileLength : layout.rowsPerStrip;
  const tilesAcross = layout.kind === "tiles" ? Math.ceil(width / layout.tileWidth) : 1;
  const decode = await blockDecoder(ifd.compression, blockWidth, blockRows, bits, inflate);

  // Uncompressed strips in the machine's byte order are already the plane's bytes: copy them
  // straight into place (one memcpy per strip) instead of converting value by value.
  const direct = ifd.compression === 1 && ifd.predictor !== 2 && layout.kind === "strips" && (bits === 8 || header.littleEndian === HOST_LITTLE_ENDIAN);

  const blocks = layout.offsets.map((offset, i) => ({ i, offset, length: layout.byteCounts[i] }));
  const groups = mergeReads(blocks);

  // The common case of a camera file: one plane's strips stored back to back, in order. One read
  // then holds the plane exactly, and its buffer becomes the plane without any copy.
  const planeBytes = width * height * bytesPerValue;
  if (direct && groups.length === 1 && isContiguousInOrder(blocks) && blocks.reduce((n, b) => n + b.length, 0) === planeBytes) {
    const buf = await source.read(groups[0].start, planeBytes, signal);
    if (buf.byteLength < planeBytes) throw new TiffFormatError(`The file ended inside the pixel data of the plane at byte ${ifd.offset}`);
    const view = float ? new Float32Array(buf, 0, width * height) : bits === 16 ? new Uint16Array(buf, 0, width * height) : new Uint8Array(buf, 0, width * height);
    return { width, height, data: view };
  }

  // Allocated only when the plane is put together from blocks: the zero-copy path above needs none,
  // and a zero-filled 8 MB array per plane thrown away cost a lot of garbage collection.
  const data = float ? new Float32Array(width * height) : bits === 16 ? new Uint16Array(width * height) : new Uint8Array(width * height);
  const dataBytes = new Uint8Array(data.buffer, data.byteOffset, data.byteLength);

  // Blocks are decoded through a window: each is put in place as soon as it is decoded, and a
  // failure stops new blocks from starting. Every block writes its own pixels, so the plane does not
  // depend on the order in which decodes finish.
  const window = blockWindow(BLOCK_WINDOW_BYTES);
  for (const { start, length, members } of groups) {
    if (window.failed) break;
    const buf = length > 0 ? await source.read(start, length, signal) : new ArrayBuffer(0);
    if (buf.byteLength < length) {
      await window.finish();
      throw new TiffFormatError(`The file ended inside the pixel data of the plane at byte ${ifd.offset}`);
    }
    for (const b of members) {
      const x0 = (b.i % tilesAcross) * blockWidth;
      const y0 = Math.floor(b.i / tilesAcross) * blockRows;
      // The last strip may be short; tiles are always stored whole, padded past the image edge.
      const rows = layout.kind === "tiles" ? blockRows : Math.min(blockRows, height - y0);
      const expected = blockWidth * rows * bytesPerValue;
      // A zero byte count marks a block that was never written: its pixels stay 0 (common practice).
      if (b.length === 0) continue;
      if (direct) {
        if (b.length < expected) {
          await window.finish();
          throw new TiffFormatError(`Strip ${b.i} of the plane at byte ${ifd.offset} holds ${b.length} bytes; ${expected} were expected (damaged data?)`);
        }
        dataBytes.set(new Uint8Array(buf, b.offset - start, expected), y0 * width * bytesPerValue);
        continue;
      }
      const block = buf.slice(b.offset - start, b.offset - start + b.length);
      await window.add(expected, async () => {
        const decoded = await decode(block, expected);
        if (decoded.byteLength < expected) {
          throw new TiffFormatError(
            `Block ${b.i} of the plane at byte ${ifd.offset} decoded to ${decoded.byteLength} bytes; ${expected} were expected (damaged data?)`,
          );
        }
        const values = toNative(decoded, blockWidth * rows, bits, float, header.littleEndian);
        if (ifd.predictor === 2) undoHorizontalDifferencing(values, blockWidth, rows);
        const copyWidth = Math.min(blockWidth, width - x0);
        const copyRows = Math.min(rows, height - y0);
        for (let y = 0; y < copyRows; y++) {
          const from = y * blockWidth;
          data.set(values.subarray(from, from + copyWidth), (y0 + y) * width + x0);
        }
      });
      if (window.failed) break;
    }
  }
  await window.finish();
  return { width, height, data };
}

/**
 * Runs block decodes with at most `budget` decoded bytes in flight. After a failure no new block
 * starts; finish() waits for every started block and throws the failure of the block started
 * first, which is the error a one-at-a-time decode would have thrown. No rejection is left unhandled.
 */
function blockWindow(budget: number) {
  const running = new Set<Promise<void>>();
  const failures: { i: number; error: unknown }[] = [];
  let bytes = 0;
  let started = 0;
  return {
    get failed() {
      return failures.length > 0;
    },
    async add(cost: number, run: () => Promise<void>): Promise<void> {
      while (running.size > 0 && bytes + cost > budget && failures.length === 0) await Promise.race(running);
      if (failures.length > 0) return;
      const i = started++;
      bytes += cost;
      const task: Promise<void> = run()
        .catch((error: unknown) => {
          failures.push({ i, error });
        })
        .finally(() => {
          bytes -= cost;
          running.delete(task);
        });
      running.add(task);
    },
    /** Waits for every started block; throws the failure of the first one started that failed, if any. */
    async finish(): Promise<void> {
      await Promise.all(running);
      if (failures.length > 0) throw failures.reduce((a, b) => (b.i < a.i ? b : a)).error;
    },
  };
}

/** Decodes one block; the bytes returned are the caller's to change in place (the predictor is undone there). */
type BlockDecode = (block: ArrayBuffer, expectedBytes: number) => Promise<Uint8Array>;

async function blockDecoder(
  compression: number,
  tileWidth: number,
  tileHeight: number,
  bits: number,
  inflate?: DecodeOptions["inflate"],
): Promise<BlockDecode> {
  if (compression === 1) return async (block) => new Uint8Array(block);
  if ((compression === 8 || compression === 32946) && inflate) {
    return async (block, expectedBytes) => {
      try {
        // Used in place, not copied: zlib's result is a fresh buffer nobody else holds.
        return await inflate(new Uint8Array(block), expectedBytes);
      } catch (e) {
        throw new TiffFormatError(`A compressed block could not be decoded: ${e instanceof Error ? e.message : String(e)}`);
      }
    };
  }
  const blockBytes = tileWidth * tileHeight * (bits / 8);
  if (compression === 32773) return async (block) => new Uint8Array(unpackBits(new Uint8Array(block), blockBytes));
  if (compression === 5) return async (block) => lzwDecode(new Uint8Array(block), blockBytes);
  // Predictor 1 here: the predictor is undone below on values in machine byte order.
  const decoder = await getDecoder(compression, { tileWidth, tileHeight, predictor: 1, bitsPerSample: [bits], planarConfiguration: 1 });
  return async (block) => {
    try {
      const out = await decoder.decode(block);
      return out instanceof ArrayBuffer ? new Uint8Array(out) : new Uint8Array(out).slice();
    } catch (e) {
      throw new TiffFormatError(`A compressed block could not be decoded: ${e instanceof Error ? e.message : String(e)}`);
    }
  };
}

/**
 * PackBits (TIFF 6.0, section 9): header n ≥ 0 copies n + 1 literal bytes, −127 ≤ n ≤ −1 repeats the
 * next byte 1 − n times, −128 is a no-op. Written here because geotiff 3.0.5 treats −128 as a run.
 */
export function unpackBits(input: Uint8Array, expectedLength: number): ArrayBuffer {
  const out = new Uint8Array(expectedLength);
  let i = 0;
  let o = 0;
  while (i < input.length && o < expectedLength) {
    const n = (input[i++] << 24) >> 24;
    if (n >= 0) {
      const end = Math.min(i + n + 1, input.length);
      const take = Math.min(end - i, expectedLength - o);
      out.set(input.subarray(i, i + take), o);
      o += take;
      i = end;
    } else if (n !== -128) {
      const count = Math.min(1 - n, expectedLength - o);
      out.fill(input[i++], o, o + count);
      o += count;
    }
  }
  return o === expectedLength ? out.buffer : out.slice(0, o).buffer;
}

function toNative(bytes: Uint8Array, count: number, bits: number, float: boolean, littleEndian: boolean): Uint8Array | Uint16Array | Float32Array {
  if (bits === 8) return bytes.subarray(0, count);
  if (littleEndian === HOST_LITTLE_ENDIAN) {
    const size = float ? 4 : 2;
    // A view where the bytes are aligned for it; a typed array cannot start at an odd offset.
    const aligned = bytes.byteOffset % size === 0 ? bytes : bytes.slice(0, count * size);
    return float ? new Float32Array(aligned.buffer, aligned.byteOffset, count) : new Uint16Array(aligned.buffer, aligned.byteOffset, count);
  }
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  if (float) {
    const out = new Float32Array(count);
    for (let i = 0; i < count; i++) out[i] = view.getFloat32(i * 4, littleEndian);
    return out;
  }
  const out = new Uint16Array(count);
  for (let i = 0; i < count; i++) out[i] = view.getUint16(i * 2, littleEndian);
  return out;
}

/** Predictor 2 (TIFF 6.0, section 14): each value was stored as the difference to its left neighbour. */
function undoHorizontalDifferencing(values: Uint8Array | Uint16Array | Float32Array, rowLength: number, rows: number): void {
  // Sums wrap modulo 2^8 / 2^16, the arithmetic the encoder used. Float data never reaches here.
  // One loop per array type keeps each loop monomorphic (about 7× faster than a shared one).
  if (values instanceof Uint16Array) accumulate(values, rowLength, rows, 0xffff);
  else if (values instanceof Uint8Array) accumulate(values, rowLength, rows, 0xff);
}

function accumulate<T extends Uint8Array | Uint16Array>(v: T, rowLength: number, rows: number, mask: number): void {
  for (let y = 0; y < rows; y++) {
    const row = y * rowLength;
    let sum = v[row];
    for (let x = row + 1; x < row + rowLength; x++) {
      sum = (sum + v[x]) & mask;
      v[x] = sum;
    }
  }
}

interface Block {
  i: number;
  offset: number;
  length: number;
}

function isContiguousInOrder(blocks: readonly Block[]): boolean {
  for (let k = 1; k < blocks.length; k++) if (blocks[k].offset !== blocks[k - 1].offset + blocks[k - 1].length) return false;
  return true;
}

function mergeReads(blocks: Block[]): { start: number; length: number; members: Block[] }[] {
  const sorted = [...blocks].sort((a, b) => a.offset - b.offset);
  const groups: { start: number; length: number; members: Block[] }[] = [];
  for (const b of sorted) {
    const g = groups[groups.length - 1];
    const end = b.offset + b.length;
    if (g && b.offset >= g.start && b.offset - (g.start + g.length) <= MERGE_GAP && end - g.start <= MERGE_MAX) {
      g.length = Math.max(g.length, end - g.start);
      g.members.push(b);
    } else {
      groups.push({ start: b.offset, length: b.length, members: [b] });
    }
  }
  return groups;
}
