// Flat-field and dark correction for display: corrected = (raw − dark) / (flat − dark) × mean(flat − dark)
// (Murphy & Davidson, "Fundamentals of Light Microscopy and Electronic Imaging", flat-field
// correction figure; shared/reference/FACTS.md). Computed in floating point into a separate
// array; the raw values are only read and nothing is written back. Pixels where flat − dark is
// near zero carry no gain information: they are marked invalid (NaN), not divided (common practice).
import type { ColourTable, Rgb } from "./colour-tables";
import { parseHex } from "./colour-tables";
import type { LevelMapping } from "./lut";
import { packRgba } from "./lut";

type Plane = Uint16Array | Uint8Array | Float32Array | Float64Array;

export interface CorrectionResult {
  /** Pixels where flat − dark ≤ epsilon: NaN in the output. */
  invalid: number;
  /** mean(flat − dark) over the valid pixels: the factor that keeps the original scale. NaN if none are valid. */
  scale: number;
}

/**
 * Writes (raw − dark) / (flat − dark) × mean(flat − dark) into `out`. The mean is taken over the
 * valid pixels only (our choice: an invalid pixel's flat − dark is not a gain and would bias the
 * scale). `epsilon` (in counts) is the smallest flat − dark treated as valid: pixels with
 * flat − dark ≤ epsilon become NaN and are counted.
 */
export function flatDarkCorrect(raw: Plane, flat: Plane, dark: Plane, out: Float32Array, options: { epsilon: number }): CorrectionResult {
  const n = raw.length;
  if (flat.length !== n || dark.length !== n) throw new RangeError(`raw, flat and dark differ in size (${n}, ${flat.length}, ${dark.length})`);
  if (out.length < n) throw new RangeError(`out holds ${out.length} values, need ${n}`);
  const { epsilon } = options;
  if (!(epsilon >= 0)) throw new RangeError(`epsilon must be ≥ 0, got ${epsilon}`);
  let sum = 0;
  let valid = 0;
  for (let i = 0; i < n; i++) {
    const d = flat[i] - dark[i];
    if (d > epsilon) {
      sum += d;
      valid++;
    }
  }
  const scale = valid > 0 ? sum / valid : NaN;
  for (let i = 0; i < n; i++) {
    const d = flat[i] - dark[i];
    out[i] = d > epsilon ? ((raw[i] - dark[i]) / d) * scale : NaN;
  }
  return { invalid: n - valid, scale };
}

export interface FloatHistogram {
  /** counts[i] covers min + i·binWidth … min + (i+1)·binWidth (the last bin includes max). */
  counts: Uint32Array;
  min: number;
  max: number;
  binWidth: number;
  /** Values counted (not NaN, inside min … max). */
  valid: number;
  /** NaN values (invalid pixels), not counted in any bin. */
  invalid: number;
}

function finiteRange(values: ArrayLike<number>): { min: number; max: number; valid: number } {
  let min = Infinity;
  let max = -Infinity;
  let valid = 0;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (v !== v) continue; // NaN: an invalid pixel
    valid++;
    if (v < min) min = v;
    if (v > max) max = v;
  }
  return { min, max, valid };
}

/**
 * Equal-width histogram of float values (the corrected plane) for the histogram plot. NaN values
 * are counted as invalid; values outside an explicit min … max are left out.
 */
export function floatHistogram(values: ArrayLike<number>, options: { bins?: number; min?: number; max?: number } = {}): FloatHistogram {
  const bins = options.bins ?? 256;
  if (!Number.isInteger(bins) || bins < 1) throw new RangeError(`bins must be a positive integer, got ${bins}`);
  const range = finiteRange(values);
  const min = options.min ?? range.min;
  const max = options.max ?? range.max;
  const counts = new Uint32Array(bins);
  if (range.valid === 0 || !(max >= min)) return { counts, min, max, binWidth: NaN, valid: 0, invalid: values.length - range.valid };
  const binWidth = max > min ? (max - min) / bins : 1;
  const scale = max > min ? bins / (max - min) : 0;
  let valid = 0;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (!(v >= min && v <= max)) continue; // false for NaN too
    counts[Math.min(bins - 1, Math.floor((v - min) * scale))]++;
    valid++;
  }
  return { counts, min, max, binWidth, valid, invalid: values.length - range.valid };
}

/**
 * Exact Hyndman & Fan (1996) type-7 percentiles (percent) of float values, NaN ignored, without
 * sorting the plane: a coarse histogram finds the bin of each needed rank, then only the values in
 * those bins are sorted. Same arithmetic as d3-array's quantile, so the results agree exactly.
 */
export function floatPercentiles(values: ArrayLike<number>, ps: readonly number[]): number[] {
  for (const p of ps) if (!(p >= 0 && p <= 100)) throw new RangeError(`Percentile must be 0…100 (percent), got ${p}`);
  const { min, max, valid: n } = finiteRange(values);
  if (n === 0) return ps.map(() => NaN);
  const bins = 4096;
  const scale = max > min ? bins / (max - min) : 0;
  const binOf = (v: number) => Math.min(bins - 1, Math.floor((v - min) * scale));
  const counts = new Uint32Array(bins);
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (v === v) counts[binOf(v)]++;
  }
  const starts = new Float64Array(bins + 1);
  for (let b = 0; b < bins; b++) starts[b + 1] = starts[b] + counts[b];
  const hs = ps.map((p) => (n - 1) * (p / 100));
  const ranks = new Set(hs.flatMap((h) => [Math.floor(h), Math.min(Math.floor(h) + 1, n - 1)]));
  // The bin holding rank r is the last b with starts[b] ≤ r (binary search).
  const binOfRank = (r: number) => {
    let lo = 0;
    let hi = bins - 1;
    while (lo < hi) {
      const mid = (lo + hi + 1) >> 1;
      if (starts[mid] <= r) lo = mid;
      else hi = mid - 1;
    }
    return lo;
  };
  const needed = new Map<number, Float64Array>();
  for (const r of ranks) {
    const b = binOfRank(r);
    if (!needed.has(b)) needed.set(b, new Float64Array(counts[b]));
  }
  const fill = new Map<number, number>([...needed.keys()].map((b) => [b, 0]));
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (v !== v) continue;
    const b = binOf(v);
    const bucket = needed.get(b);
    if (bucket) {
      const k = fill.get(b) as number;
      bucket[k] = v;
      fill.set(b, k + 1);
    }
  }
  for (const bucket of needed.values()) bucket.sort();
  const valueAt = (r: number) => {
    const b = binOfRank(r);
    return (needed.get(b) as Float64Array)[r - starts[b]];
  };
  return hs.map((h) => {
    const j = Math.floor(h);
    const lo = valueAt(j);
    const hi = valueAt(Math.min(j + 1, n - 1));
    return lo + (hi - lo) * (h - j);
  });
}

/**
 * Fit on corrected (float) values: black and white are the type-7 percentiles themselves (no
 * rounding: corrected values are not whole counts). White is kept above black: when they meet, white
 * = black + 1 (one count). NaN (invalid) pixels are ignored; with none valid, returns NaN for both.
 */
export function fitRangeFloat(values: ArrayLike<number>, options: { low?: number; high?: number } = {}): { black: number; white: number } {
  const { low = 0.1, high = 99.9 } = options;
  if (!(low < high)) throw new RangeError(`low (${low}) must be below high (${high})`);
  const [black, white] = floatPercentiles(values, [low, high]);
  return { black, white: white > black ? white : black + 1 };
}

/**
 * Maps corrected values to packed RGBA: level = round(255 · t^gamma) with t = (v − black)/(white −
 * black) clamped to 0 … 1 (as buildLut, computed per pixel since floats have no small value set);
 * invalid (NaN) pixels get `invalidColour`.
 */
export function mapFloatToRgba(values: ArrayLike<number>, mapping: LevelMapping, table: ColourTable, out: Uint32Array, invalidColour: Rgb | string): Uint32Array {
  const { black, white } = mapping;
  const gamma = mapping.gamma ?? 1;
  if (!(white > black)) throw new RangeError(`white (${white}) must be above black (${black})`);
  if (out.length < values.length) throw new RangeError(`out holds ${out.length} pixels, need ${values.length}`);
  const palette = new Uint32Array(256);
  for (let i = 0; i < 256; i++) palette[i] = packRgba(table.rgb[3 * i], table.rgb[3 * i + 1], table.rgb[3 * i + 2]);
  const inv = typeof invalidColour === "string" ? parseHex(invalidColour) : invalidColour;
  const invalid = packRgba(inv[0], inv[1], inv[2]);
  const span = white - black;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (v !== v) {
      out[i] = invalid;
      continue;
    }
    const t = Math.min(Math.max((v - black) / span, 0), 1);
    out[i] = palette[Math.floor(255 * (gamma === 1 ? t : Math.pow(t, gamma)) + 0.5)];
  }
  return out;
}
