import { windowedSource, type ByteSource } from "./byte-source";

/** A file that is not a readable TIFF, or whose structure is damaged; the message is meant for a person. */
export class TiffFormatError extends Error {
  override name = "TiffFormatError";
}

export interface TiffHeader {
  littleEndian: boolean;
  /** BigTIFF (version 43, 8-byte offsets) rather than classic TIFF (version 42). */
  bigTiff: boolean;
  firstIfdOffset: number;
}

export type PlaneLayout =
  | { kind: "strips"; rowsPerStrip: number; offsets: number[]; byteCounts: number[] }
  | { kind: "tiles"; tileWidth: number; tileLength: number; offsets: number[]; byteCounts: number[] };

export interface IfdInfo {
  /** Position in the IFD chain, 0-based. */
  index: number;
  /** Byte offset of the IFD itself: store it to open this plane later without walking the chain. */
  offset: number;
  nextIfdOffset: number;
  width: number;
  height: number;
  /** One entry per sample. */
  bitsPerSample: number[];
  samplesPerPixel: number;
  /** One entry per sample: 1 unsigned integer, 2 signed integer, 3 float (TIFF 6.0 tag 339). */
  sampleFormat: number[];
  compression: number;
  predictor: number;
  planarConfiguration: number;
  photometric: number | null;
  /** NewSubfileType (tag 254); bit 0 set marks a reduced-resolution copy, not a plane. */
  subfileType: number;
  layout: PlaneLayout;
  /** Tag 270; read for the first IFD, and for all IFDs when asked. */
  imageDescription: string | null;
  lossy: boolean;
  supported: boolean;
  /** Why `supported` is false, in words. */
  unsupportedReason: string | null;
}

export interface TiffStructure extends TiffHeader {
  fileSize: number;
  ifds: IfdInfo[];
}

export interface ReadStructureOptions {
  /** "first" (default) reads ImageDescription of IFD 0 only; "all" reads it everywhere. */
  descriptions?: "first" | "all";
  /** Refuse files with more IFDs than this (default 1,000,000). */
  maxIfds?: number;
  signal?: AbortSignal;
}

const TAG = {
  NewSubfileType: 254,
  ImageWidth: 256,
  ImageLength: 257,
  BitsPerSample: 258,
  Compression: 259,
  Photometric: 262,
  ImageDescription: 270,
  StripOffsets: 273,
  SamplesPerPixel: 277,
  RowsPerStrip: 278,
  StripByteCounts: 279,
  PlanarConfiguration: 284,
  Predictor: 317,
  TileWidth: 322,
  TileLength: 323,
  TileOffsets: 324,
  TileByteCounts: 325,
  SampleFormat: 339,
} as const;

// Bytes per value for each TIFF field type (TIFF 6.0 section 2; BigTIFF adds 16, 17, 18).
const TYPE_SIZE: Record<number, number> = { 1: 1, 2: 1, 3: 2, 4: 4, 5: 8, 6: 1, 7: 1, 8: 2, 9: 4, 10: 8, 11: 4, 12: 8, 13: 4, 16: 8, 17: 8, 18: 8 };

/** Lossless codecs this module decodes (TIFF 6.0: 1 none, 5 LZW, 8/32946 Deflate, 32773 PackBits). */
export const SUPPORTED_COMPRESSION: ReadonlySet<number> = new Set([1, 5, 8, 32946, 32773]);

// 6/7 JPEG are lossy per TIFF 6.0; the others (JPEG 2000 33003/33004/33005/34712, lossy JPEG 34892,
// WebP 50001, JPEG XL 50002) are registered codes listed from memory.
const LOSSY_COMPRESSION: ReadonlySet<number> = new Set([6, 7, 33003, 33004, 33005, 34712, 34892, 50001, 50002]);

const COMPRESSION_NAMES: Record<number, string> = {
  1: "none", 2: "CCITT RLE", 3: "CCITT G3", 4: "CCITT G4", 5: "LZW", 6: "old-style JPEG", 7: "JPEG",
  8: "Deflate", 32773: "PackBits", 32946: "Deflate", 33003: "JPEG 2000", 33005: "JPEG 2000", 34712: "JPEG 2000",
  34887: "LERC", 34892: "lossy JPEG", 50000: "Zstandard", 50001: "WebP", 50002: "JPEG XL",
};

export function compressionName(code: number): string {
  return COMPRESSION_NAMES[code] ?? `code ${code}`;
}

/** Reads typed values from a ByteSource in the file's byte order. */
class TiffReader {
  constructor(
    readonly source: ByteSource,
    readonly littleEndian: boolean,
    readonly bigTiff: boolean,
    readonly signal?: AbortSignal,
  ) {}

  async view(offset: number, length: number, what: string): Promise<DataView> {
    if (offset + length > this.source.size) {
      throw new TiffFormatError(
        `${what} lies at bytes ${offset}–${offset + length}, past the end of the ${this.source.size}-byte file (is the file truncated?)`,
      );
    }
    const buf = await this.source.read(offset, length, this.signal);
    if (buf.byteLength < length) throw new TiffFormatError(`Could read only ${buf.byteLength} of ${length} bytes of ${what}`);
    return new DataView(buf);
  }

  uint64(v: DataView, at: number, what: string): number {
    const n = v.getBigUint64(at, this.littleEndian);
    if (n > BigInt(Number.MAX_SAFE_INTEGER)) throw new TiffFormatError(`${what} is ${n}, too large to be a position in a file`);
    return Number(n);
  }

  offsetAt(v: DataView, at: number, what: string): number {
    return this.bigTiff ? this.uint64(v, at, what) : v.getUint32(at, this.littleEndian);
  }
}

interface RawEntry {
  tag: number;
  type: number;
  count: number;
  /** Where the values are: inside the entry, or at an offset elsewhere in the file. */
  valueOffset: number;
  inline: DataView | null;
}

export async function readTiffHeader(source: ByteSource, signal?: AbortSignal): Promise<TiffHeader> {
  if (source.size < 8) throw new TiffFormatError(`The file is ${source.size} bytes long, too short to be a TIFF`);
  const v = new DataView(await source.read(0, Math.min(16, source.size), signal));
  const order = v.getUint16(0, false);
  if (order !== 0x4949 && order !== 0x4d4d) {
    throw new TiffFormatError("This is not a TIFF file: it does not start with the byte-order mark II or MM");
  }
  const littleEndian = order === 0x4949;
  const version = v.getUint16(2, littleEndian);
  if (version === 42) {
    return { littleEndian, bigTiff: false, firstIfdOffset: v.getUint32(4, littleEndian) };
  }
  if (version === 43) {
    if (v.byteLength < 16) throw new TiffFormatError("The file is too short to hold a BigTIFF header (16 bytes)");
    const offsetSize = v.getUint16(4, littleEndian);
    if (offsetSize !== 8) throw new TiffFormatError(`BigTIFF header declares ${offsetSize}-byte offsets; only 8 is defined`);
    const reader = new TiffReader(source, littleEndian, true);
    return { littleEndian, bigTiff: true, firstIfdOffset: reader.uint64(v, 8, "The first IFD offset") };
  }
  throw new TiffFormatError(`This is not a TIFF file: version number ${version} (expected 42 for TIFF or 43 for BigTIFF)`);
}

async function readEntries(r: TiffReader, offset: number, what: string): Promise<{ entries: RawEntry[]; next: number }> {
  const countSize = r.bigTiff ? 8 : 2;
  const entrySize = r.bigTiff ? 20 : 12;
  const cv = await r.view(offset, countSize, what);
  const count = r.bigTiff ? r.uint64(cv, 0, `The entry count of ${what}`) : cv.getUint16(0, r.littleEndian);
  if (count === 0) throw new TiffFormatError(`${what} has no entries`);
  const bodyLength = count * entrySize + (r.bigTiff ? 8 : 4);
  if (offset + countSize + bodyLength > r.source.size) {
    throw new TiffFormatError(`${what} claims ${count} entries, which would run past the end of the ${r.source.size}-byte file`);
  }
  const v = await r.view(offset + countSize, bodyLength, what);
  const inlineSize = r.bigTiff ? 8 : 4;
  const entries: RawEntry[] = [];
  for (let i = 0; i < count; i++) {
    const at = i * entrySize;
    const tag = v.getUint16(at, r.littleEndian);
    const type = v.getUint16(at + 2, r.littleEndian);
    const n = r.bigTiff ? r.uint64(v, at + 4, `The value count of tag ${tag}`) : v.getUint32(at + 4, r.littleEndian);
    const valuePos = at + (r.bigTiff ? 12 : 8);
    const size = TYPE_SIZE[type];
    // Unknown types are legal for private tags; they are skipped unless the tag is one we need.
    if (size === undefined) {
      entries.push({ tag, type, count: n, valueOffset: -1, inline: null });
      continue;
    }
    const bytes = size * n;
    if (bytes > r.source.size) {
      throw new TiffFormatError(`Tag ${tag} in ${what} claims ${n} values (${bytes} bytes), more than the whole file`);
    }
    if (bytes <= inlineSize) {
      entries.push({ tag, type, count: n, valueOffset: -1, inline: new DataView(v.buffer, v.byteOffset + valuePos, inlineSize) });
    } else {
      entries.push({ tag, type, count: n, valueOffset: r.offsetAt(v, valuePos, `The value offset of tag ${tag}`), inline: null });
    }
  }
  const next = r.offsetAt(v, count * entrySize, `The next-IFD offset after ${what}`);
  return { entries, next };
}

async function readNumbers(r: TiffReader, e: RawEntry, what: string): Promise<number[]> {
  const size = TYPE_SIZE[e.type];
  // Floats (11, 12) too: a width of 2.5 or NaN would pass every later check.
  if (size === undefined || e.type === 2 || e.type === 5 || e.type === 10 || e.type === 11 || e.type === 12) {
    throw new TiffFormatError(`${what} has field type ${e.type}, which is not a whole number`);
  }
  const v = e.inline ?? (await r.view(e.valueOffset, size * e.count, what));
  const le = r.littleEndian;
  const out = new Array<number>(e.count);
  for (let i = 0; i < e.count; i++) {
    const at = i * size;
    switch (e.type) {
      case 1: case 7: out[i] = v.getUint8(at); break;
      case 6: out[i] = v.getInt8(at); break;
      case 3: out[i] = v.getUint16(at, le); break;
      case 8: out[i] = v.getInt16(at, le); break;
      case 4: case 13: out[i] = v.getUint32(at, le); break;
      case 9: out[i] = v.getInt32(at, le); break;
      case 11: out[i] = v.getFloat32(at, le); break;
      case 12: out[i] = v.getFloat64(at, le); break;
      case 16: case 18: out[i] = r.uint64(v, at, what); break;
      case 17: {
        const n = v.getBigInt64(at, le);
        if (n > BigInt(Number.MAX_SAFE_INTEGER) || n < -BigInt(Number.MAX_SAFE_INTEGER)) throw new TiffFormatError(`${what} is ${n}, too large to use`);
        out[i] = Number(n);
        break;
      }
    }
  }
  return out;
}

async function readText(r: TiffReader, e: RawEntry, what: string): Promise<string> {
  // An unknown field type has no value offset (and its count was never checked against the file).
  if (TYPE_SIZE[e.type] === undefined) throw new TiffFormatError(`${what} has field type ${e.type}, which is not text`);
  const v = e.inline ?? (await r.view(e.valueOffset, e.count, what));
  const bytes = new Uint8Array(v.buffer, v.byteOffset, e.count);
  // TIFF says 7-bit ASCII, but OME-XML is written as UTF-8 (µm), so decode as UTF-8.
  return new TextDecoder("utf-8").decode(bytes).replace(/\0+$/, "");
}

function describe(index: number, offset: number): string {
  return `IFD ${index} (at byte ${offset})`;
}

/**
 * Reads one IFD at a known offset. Used by the chain walk and by decode (which must not walk).
 * `index` only labels error messages.
 */
export async function readIfdAt(
  source: ByteSource,
  header: TiffHeader,
  offset: number,
  options: { index?: number; description?: boolean; signal?: AbortSignal } = {},
): Promise<IfdInfo> {
  const index = options.index ?? 0;
  const r = new TiffReader(source, header.littleEndian, header.bigTiff, options.signal);
  const what = describe(index, offset);
  const { entries, next } = await readEntries(r, offset, what);
  const byTag = new Map<number, RawEntry>();
  for (const e of entries) byTag.set(e.tag, e);

  const nums = async (tag: number, name: string): Promise<number[] | null> => {
    const e = byTag.get(tag);
    return e ? readNumbers(r, e, `${name} of ${what}`) : null;
  };
  const one = async (tag: number, name: string, fallback: number | null): Promise<number> => {
    const v = await nums(tag, name);
    if (v && v.length > 0) return v[0];
    if (fallback === null) throw new TiffFormatError(`${what} has no ${name} tag, which every image needs`);
    return fallback;
  };

  const width = await one(TAG.ImageWidth, "ImageWidth", null);
  const height = await one(TAG.ImageLength, "ImageLength", null);
  if (width < 1 || height < 1) throw new TiffFormatError(`${what} has an empty image (${width} × ${height} pixels)`);
  const samplesPerPixel = await one(TAG.SamplesPerPixel, "SamplesPerPixel", 1);
  if (samplesPerPixel < 1 || samplesPerPixel > 64) throw new TiffFormatError(`${what} claims ${samplesPerPixel} samples per pixel`);
  const perSample = (v: number[] | null, fallback: number) =>
    Array.from({ length: samplesPerPixel }, (_, i) => (v && v.length > 0 ? v[Math.min(i, v.length - 1)] : fallback));
  const bitsPerSample = perSample(await nums(TAG.BitsPerSample, "BitsPerSample"), 1);
  const sampleFormat = perSample(await nums(TAG.SampleFormat, "SampleFormat"), 1);
  const compression = await one(TAG.Compression, "Compression", 1);
  const predictor = await one(TAG.Predictor, "Predictor", 1);
  const planarConfiguration = await one(TAG.PlanarConfiguration, "PlanarConfiguration", 1);
  const photometricEntry = await nums(TAG.Photometric, "PhotometricInterpretation");
  const subfileType = await one(TAG.NewSubfileType, "NewSubfileType", 0);

  const planes = planarConfiguration === 2 ? samplesPerPixel : 1;
  let layout: PlaneLayout;
  const tiled = byTag.has(TAG.TileOffsets);
  if (tiled) {
    const tileWidth = await one(TAG.TileWidth, "TileWidth", null);
    const tileLength = await one(TAG.TileLength, "TileLength", null);
    if (tileWidth < 1 || tileLength < 1) throw new TiffFormatError(`${what} has tiles of ${tileWidth} × ${tileLength} pixels`);
    const offsets = (await nums(TAG.TileOffsets, "TileOffsets")) ?? [];
    const byteCounts = (await nums(TAG.TileByteCounts, "TileByteCounts")) ?? [];
    const expected = Math.ceil(width / tileWidth) * Math.ceil(height / tileLength) * planes;
    checkBlocks(what, "tile", offsets, byteCounts, expected, source.size);
    layout = { kind: "tiles", tileWidth, tileLength, offsets, byteCounts };
  } else {
    if (!byTag.has(TAG.StripOffsets)) throw new TiffFormatError(`${what} has neither strip nor tile offsets, so it holds no pixels`);
    // RowsPerStrip defaults to "the whole image" (TIFF 6.0: 2^32 − 1).
    const rowsPerStrip = Math.min(await one(TAG.RowsPerStrip, "RowsPerStrip", height), height);
    if (rowsPerStrip < 1) throw new TiffFormatError(`${what} has RowsPerStrip ${rowsPerStrip}`);
    const offsets = (await nums(TAG.StripOffsets, "StripOffsets")) ?? [];
    const byteCounts = (await nums(TAG.StripByteCounts, "StripByteCounts")) ?? [];
    const expected = Math.ceil(height / rowsPerStrip) * planes;
    checkBlocks(what, "strip", offsets, byteCounts, expected, source.size);
    layout = { kind: "strips", rowsPerStrip, offsets, byteCounts };
  }

  let imageDescription: string | null = null;
  const descEntry = byTag.get(TAG.ImageDescription);
  if (descEntry && (options.description ?? index === 0)) imageDescription = await readText(r, descEntry, `ImageDescription of ${what}`);

  const lossy = LOSSY_COMPRESSION.has(compression);
  const unsupportedReason = whyUnsupported({ samplesPerPixel, bitsPerSample, sampleFormat, compression, predictor, photometric: photometricEntry?.[0] ?? null });
  return {
    index,
    offset,
    nextIfdOffset: next,
    width,
    height,
    bitsPerSample,
    samplesPerPixel,
    sampleFormat,
    compression,
    predictor,
    planarConfiguration,
    photometric: photometricEntry?.[0] ?? null,
    subfileType,
    layout,
    imageDescription,
    lossy,
    supported: unsupportedReason === null,
    unsupportedReason,
  };
}

function checkBlocks(what: string, kind: string, offsets: number[], byteCounts: number[], expected: number, fileSize: number): void {
  if (offsets.length !== expected) {
    throw new TiffFormatError(`${what} lists ${offsets.length} ${kind} offsets, but its size and layout need ${expected}`);
  }
  if (byteCounts.length !== offsets.length) {
    throw new TiffFormatError(`${what} lists ${offsets.length} ${kind} offsets but ${byteCounts.length} ${kind} byte counts`);
  }
  for (let i = 0; i < offsets.length; i++) {
    // Signed field types can hold negative positions, which no read may be asked for.
    if (offsets[i] < 0 || byteCounts[i] < 0) {
      throw new TiffFormatError(`${kind[0].toUpperCase()}${kind.slice(1)} ${i} of ${what} has offset ${offsets[i]} and byte count ${byteCounts[i]}; neither may be negative`);
    }
    if (offsets[i] + byteCounts[i] > fileSize) {
      throw new TiffFormatError(
        `${kind[0].toUpperCase()}${kind.slice(1)} ${i} of ${what} ends at byte ${offsets[i] + byteCounts[i]}, past the end of the ${fileSize}-byte file (is the file truncated?)`,
      );
    }
  }
}

/** The pixel formats decode.ts handles: one sample per pixel, 8/16-bit unsigned or 32-bit float, lossless codecs. */
export function whyUnsupported(p: {
  samplesPerPixel: number;
  bitsPerSample: number[];
  sampleFormat: number[];
  compression: number;
  predictor: number;
  photometric: number | null;
}): string | null {
  if (LOSSY_COMPRESSION.has(p.compression)) {
    return `${compressionName(p.compression)} compression is lossy: the stored values are not the camera's counts`;
  }
  if (!SUPPORTED_COMPRESSION.has(p.compression)) return `${compressionName(p.compression)} compression is not supported`;
  if (p.samplesPerPixel !== 1) return `${p.samplesPerPixel} samples per pixel (colour images) are not supported; store one channel per plane`;
  if (p.photometric !== null && p.photometric > 1) return `photometric interpretation ${p.photometric} (colour or palette) is not supported`;
  const bits = p.bitsPerSample[0];
  const format = p.sampleFormat[0];
  const ok = (format === 1 && (bits === 8 || bits === 16)) || (format === 3 && bits === 32);
  if (!ok) {
    const kind = format === 1 ? "unsigned" : format === 2 ? "signed" : format === 3 ? "float" : `format ${format}`;
    return `${bits}-bit ${kind} samples are not supported (8/16-bit unsigned and 32-bit float are)`;
  }
  if (p.predictor !== 1 && p.predictor !== 2) return `predictor ${p.predictor} is not supported (only none and horizontal differencing)`;
  if (p.predictor === 2 && format === 3) return "horizontal differencing on float samples is not supported";
  return null;
}

/**
 * Reads the header and every IFD of the chain (not the pixel data). Metadata reads go through a
 * 64 KiB window cache, so thousands of IFDs packed together cost a handful of reads.
 */
export async function readTiffStructure(source: ByteSource, options: ReadStructureOptions = {}): Promise<TiffStructure> {
  const maxIfds = options.maxIfds ?? 1_000_000;
  const cached = windowedSource(source);
  const header = await readTiffHeader(cached, options.signal);
  const ifds: IfdInfo[] = [];
  const seen = new Set<number>();
  let offset = header.firstIfdOffset;
  if (offset === 0) throw new TiffFormatError("The file has no images (its first IFD offset is 0)");
  while (offset !== 0) {
    const index = ifds.length;
    if (seen.has(offset)) {
      throw new TiffFormatError(`IFD ${index - 1} points back to byte ${offset}, an IFD already read: the IFD chain loops`);
    }
    if (offset >= source.size) {
      throw new TiffFormatError(
        `${index === 0 ? "The first IFD" : `IFD ${index}`} should start at byte ${offset}, past the end of the ${source.size}-byte file (is the file truncated?)`,
      );
    }
    if (index >= maxIfds) throw new TiffFormatError(`The file has more than ${maxIfds} IFDs; refusing to read further`);
    seen.add(offset);
    const ifd = await readIfdAt(cached, header, offset, {
      index,
      description: options.descriptions === "all" || index === 0,
      signal: options.signal,
    });
    ifds.push(ifd);
    offset = ifd.nextIfdOffset;
  }
  return { ...header, fileSize: source.size, ifds };
}
