// Display mapping through lookup tables. A 16-bit plane has at most 65,536 distinct values, so the
// mapping (black/white/gamma) and the colour table are evaluated once per value, not once per pixel:
// buildLut gives raw value → 8-bit level, buildRgbaLut fuses that with a colour table into raw
// value → packed RGBA, and mapChannel does one lookup per pixel. Raw values are only read.
import type { ColourTable } from "./colour-tables";

/** The part of a channel mapping the lookup table depends on (see ChannelMapping in mapping.ts). */
export interface LevelMapping {
  black: number;
  white: number;
  /** Display gamma; absent or 1 means linear. Non-linear mappings must be disclosed (Rossner & Yamada 2004). */
  gamma?: number;
}

export const RGBA_LUT_SIZE = 65536;

/**
 * Byte order of packed RGBA. We always want the bytes in memory to read R, G, B, A (the layout of
 * ImageData and canvas), so on a little-endian machine (every current browser platform) the
 * Uint32 value is A·2²⁴ + B·2¹⁶ + G·2⁸ + R, i.e. 0xAABBGGRR; on a big-endian one it is 0xRRGGBBAA.
 */
export const LITTLE_ENDIAN = new Uint8Array(new Uint32Array([1]).buffer)[0] === 1;

/** Packs r, g, b, a (0…255) so that the Uint32's bytes in memory are R, G, B, A on any platform. */
export function packRgba(r: number, g: number, b: number, a = 255): number {
  return LITTLE_ENDIAN ? ((a << 24) | (b << 16) | (g << 8) | r) >>> 0 : ((r << 24) | (g << 16) | (b << 8) | a) >>> 0;
}

export function unpackRgba(v: number): [number, number, number, number] {
  return LITTLE_ENDIAN ? [v & 255, (v >>> 8) & 255, (v >>> 16) & 255, v >>> 24] : [v >>> 24, (v >>> 16) & 255, (v >>> 8) & 255, v & 255];
}

function checkMapping({ black, white, gamma }: LevelMapping, ceiling: number): void {
  if (!Number.isInteger(ceiling) || ceiling < 1 || ceiling > 65535) throw new RangeError(`ceiling must be an integer 1…65535, got ${ceiling}`);
  if (!Number.isFinite(black) || !Number.isFinite(white)) throw new RangeError(`black and white must be finite, got ${black}, ${white}`);
  if (!(white > black)) throw new RangeError(`white (${white}) must be above black (${black})`);
  if (gamma !== undefined && !(gamma > 0 && Number.isFinite(gamma))) throw new RangeError(`gamma must be a positive number, got ${gamma}`);
}

/**
 * Raw value → 8-bit display level for every value 0 … ceiling (ceiling + 1 entries; 65,536 for a
 * 16-bit ceiling). value ≤ black → 0, value ≥ white → 255, in between t = (value − black)/(white −
 * black) and level = round(255 · t), rounding half up (floor(255·t + 0.5)); with whole-number black
 * and white the half cases are exact in doubles. A gamma is applied as level = round(255 · t^gamma)
 * only when it is set and not 1, so a linear mapping is never touched by Math.pow.
 */
export function buildLut(mapping: LevelMapping, ceiling = 65535): Uint8Array {
  checkMapping(mapping, ceiling);
  const { black, white } = mapping;
  const gamma = mapping.gamma ?? 1;
  const lut = new Uint8Array(ceiling + 1);
  const span = white - black;
  const first = Math.max(0, Math.floor(black) + 1);
  const last = Math.min(ceiling, Math.ceil(white) - 1);
  // Entries ≤ black stay 0 (the array starts zeroed); entries ≥ white are 255.
  if (gamma === 1) {
    for (let v = first; v <= last; v++) lut[v] = Math.floor(((v - black) * 255) / span + 0.5);
  } else {
    for (let v = first; v <= last; v++) lut[v] = Math.floor(255 * Math.pow((v - black) / span, gamma) + 0.5);
  }
  if (last + 1 <= ceiling) lut.fill(255, Math.max(last + 1, 0));
  return lut;
}

/**
 * Fuses a level table and a colour table into one 65,536-entry raw value → packed RGBA table
 * (opaque). Values beyond the level table (above the ceiling) take its last entry, i.e. the colour
 * of the ceiling.
 */
export function buildRgbaLut(lut: Uint8Array, table: ColourTable, out = new Uint32Array(RGBA_LUT_SIZE)): Uint32Array {
  if (out.length !== RGBA_LUT_SIZE) throw new RangeError(`rgbaLut must have ${RGBA_LUT_SIZE} entries`);
  const palette = new Uint32Array(256);
  for (let i = 0; i < 256; i++) palette[i] = packRgba(table.rgb[3 * i], table.rgb[3 * i + 1], table.rgb[3 * i + 2]);
  const n = Math.min(lut.length, RGBA_LUT_SIZE);
  for (let v = 0; v < n; v++) out[v] = palette[lut[v]];
  if (n < RGBA_LUT_SIZE) out.fill(palette[lut[n - 1]], n);
  return out;
}

/**
 * One lookup per pixel: raw value → packed RGBA. No branches; `out` must hold one Uint32 per pixel.
 * The loops work on Int32 views of the same memory (packed words with alpha 255 exceed 2³¹, and V8
 * keeps int32 values unboxed). 16-bit planes on a 4-byte boundary are read two pixels per 32-bit
 * word in a separate loop function taking its arrays as parameters (V8 compiles that tighter than
 * an inline loop; measured in tests/bench/pixels.ts); other planes take the loop unrolled by four.
 */
export function mapChannel(pixels: Uint16Array | Uint8Array, rgbaLut: Uint32Array, out: Uint32Array): Uint32Array {
  if (out.length < pixels.length) throw new RangeError(`out holds ${out.length} pixels, need ${pixels.length}`);
  if (rgbaLut.length < (pixels instanceof Uint8Array ? 256 : RGBA_LUT_SIZE)) throw new RangeError("rgbaLut is too short for these pixels");
  const lut = new Int32Array(rgbaLut.buffer, rgbaLut.byteOffset, rgbaLut.length);
  const o = new Int32Array(out.buffer, out.byteOffset, out.length);
  const n = pixels.length;
  // Word reads put pixel 2k in the low half only on a little-endian host.
  if (LITTLE_ENDIAN && pixels instanceof Uint16Array && pixels.byteOffset % 4 === 0) {
    const pairs = n >> 1;
    mapPairs(o, new Int32Array(pixels.buffer, pixels.byteOffset, pairs), lut, pairs);
    if (n & 1) o[n - 1] = lut[pixels[n - 1]];
    return out;
  }
  let i = 0;
  for (; i + 3 < n; i += 4) {
    const a = lut[pixels[i]];
    const b = lut[pixels[i + 1]];
    const c = lut[pixels[i + 2]];
    const d = lut[pixels[i + 3]];
    o[i] = a;
    o[i + 1] = b;
    o[i + 2] = c;
    o[i + 3] = d;
  }
  for (; i < n; i++) o[i] = lut[pixels[i]];
  return out;
}

/** mapChannel's loop over whole words of a 16-bit plane: two words (four pixels) per step. */
function mapPairs(o: Int32Array, words: Int32Array, lut: Int32Array, pairs: number): void {
  let k = 0;
  for (; k + 1 < pairs; k += 2) {
    const a = words[k];
    const b = words[k + 1];
    const j = 2 * k;
    o[j] = lut[a & 0xffff];
    o[j + 1] = lut[a >>> 16];
    o[j + 2] = lut[b & 0xffff];
    o[j + 3] = lut[b >>> 16];
  }
  if (k < pairs) {
    const a = words[k];
    o[2 * k] = lut[a & 0xffff];
    o[2 * k + 1] = lut[a >>> 16];
  }
}

/**
 * Maps one channel to RGBA through a level table and a colour table: builds the fused rgbaLut
 * (65,536 entries) and does one lookup per pixel. Returns the rgbaLut so callers (composite, the
 * worker's cache) can reuse it for the next plane with mapChannel.
 */
export function mapToRgba(pixels: Uint16Array | Uint8Array, lut: Uint8Array, table: ColourTable, out: Uint32Array): Uint32Array {
  const rgbaLut = buildRgbaLut(lut, table);
  mapChannel(pixels, rgbaLut, out);
  return rgbaLut;
}
