/** Counts per raw value: index v holds the number of pixels equal to v. */
export type Histogram = Uint32Array | Float64Array;

export interface HistogramStats {
  /** Number of pixels counted. */
  count: number;
  /** Lowest and highest value present; NaN when count is 0. */
  min: number;
  max: number;
  mean: number;
  /** Population standard deviation (divides by N, not N − 1); NaN when count is 0. */
  sd: number;
  countAtZero: number;
  /** Pixels exactly at the ceiling; null when no ceiling was given. */
  countAtCeiling: number | null;
}

/**
 * Exact integer histogram of one plane, one pass. Values ≥ `bins` are an error rather than being
 * clipped, so a wrong bin count can never hide pixels. Per-plane counts fit in 32 bits.
 */
export function histogram16(pixels: Uint16Array | Uint8Array, bins = 65536): Uint32Array {
  if (!Number.isInteger(bins) || bins < 1 || bins > 65536) throw new RangeError(`bins must be 1…65536, got ${bins}`);
  const counts = new Uint32Array(bins);
  const limit = pixels instanceof Uint8Array ? 256 : 65536;
  if (bins >= limit) {
    if (pixels instanceof Uint16Array && pixels.byteOffset % 4 === 0) {
      // Two pixels per 32-bit read: about 30 % faster on a 2048² plane (tests/bench/pixels.ts); both
      // halves are counted, so the host's byte order does not matter.
      const pairs = pixels.length >> 1;
      const words = new Uint32Array(pixels.buffer, pixels.byteOffset, pairs);
      for (let i = 0; i < pairs; i++) {
        const w = words[i];
        counts[w & 0xffff]++;
        counts[w >>> 16]++;
      }
      if (pixels.length & 1) counts[pixels[pixels.length - 1]]++;
      return counts;
    }
    for (let i = 0; i < pixels.length; i++) counts[pixels[i]]++;
    return counts;
  }
  for (let i = 0; i < pixels.length; i++) {
    const v = pixels[i];
    if (v >= bins) throw new RangeError(`Pixel ${i} has value ${v}, beyond the last of ${bins} bins`);
    counts[v]++;
  }
  return counts;
}

/**
 * Sums histograms (e.g. every plane of a channel). Float64 counts stay exact up to 2^53 pixels,
 * where Uint32 would overflow past about 4.3 × 10^9.
 */
export function mergeHistograms(histograms: readonly Histogram[]): Float64Array {
  const bins = histograms.reduce((n, h) => Math.max(n, h.length), 0);
  const out = new Float64Array(bins);
  for (const h of histograms) for (let v = 0; v < h.length; v++) out[v] += h[v];
  return out;
}

export function countAt(h: Histogram, value: number): number {
  return Number.isInteger(value) && value >= 0 && value < h.length ? h[value] : 0;
}

/** Min, max, mean and population SD from a histogram; exact sums as long as Σ v·n < 2^53. */
export function statsFromHistogram(h: Histogram, ceiling?: number): HistogramStats {
  let count = 0;
  let sum = 0;
  let min = NaN;
  let max = NaN;
  for (let v = 0; v < h.length; v++) {
    const n = h[v];
    if (n === 0) continue;
    if (count === 0) min = v;
    max = v;
    count += n;
    sum += v * n;
  }
  const mean = count > 0 ? sum / count : NaN;
  // Second pass around the mean avoids the cancellation of Σv² − N·mean².
  let squares = 0;
  for (let v = min; v <= max; v++) {
    const n = h[v];
    if (n !== 0) squares += n * (v - mean) * (v - mean);
  }
  return {
    count,
    min,
    max,
    mean,
    sd: count > 0 ? Math.sqrt(squares / count) : NaN,
    countAtZero: countAt(h, 0),
    countAtCeiling: ceiling === undefined ? null : countAt(h, ceiling),
  };
}
