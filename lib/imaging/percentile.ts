import type { Histogram } from "./histogram";

/** The percentiles the bench and the ingest report, in percent. */
export const STANDARD_PERCENTILES = [0.01, 0.1, 1, 50, 99, 99.9, 99.99] as const;

function checkPercent(p: number): void {
  if (!(p >= 0 && p <= 100)) throw new RangeError(`Percentile must be 0…100 (percent), got ${p}`);
}

/**
 * Hyndman & Fan (1996) type 7, the default of numpy and d3-array: with the values sorted
 * (x[0] … x[n−1]) and h = (n − 1)·p, Q = x[j] + (h − j)·(x[j+1] − x[j]) where j = floor(h).
 * Here x is implicit in the histogram, so no sort. `p` is in percent; NaN when total is 0.
 */
export function percentileFromHistogram(hist: Histogram, total: number, p: number): number {
  return percentiles(hist, [p], total)[0];
}

function sumCounts(hist: Histogram): number {
  let n = 0;
  for (let v = 0; v < hist.length; v++) n += hist[v];
  return n;
}

/**
 * Several percentiles (percent) in one walk over the histogram. `total` defaults to the sum of
 * the counts; pass it when known to save a pass.
 */
export function percentiles(hist: Histogram, ps: readonly number[], total?: number): number[] {
  ps.forEach(checkPercent);
  const n = total ?? sumCounts(hist);
  if (n === 0) return ps.map(() => NaN);
  // Same arithmetic as d3-array's quantileSorted (h, j, then x[j] + (x[j+1] − x[j])·(h − j)), so
  // results agree to the last bit. Each percentile needs the order statistics of ranks j and j + 1.
  const hs = ps.map((p) => (n - 1) * (p / 100));
  const ranks = [...new Set(hs.flatMap((h) => [Math.floor(h), Math.min(Math.floor(h) + 1, n - 1)]))].sort((a, b) => a - b);
  const valueAt = new Map<number, number>();
  let cumulative = 0;
  let next = 0;
  for (let v = 0; v < hist.length && next < ranks.length; v++) {
    cumulative += hist[v];
    // Value v holds the ranks below `cumulative` not taken by smaller values.
    while (next < ranks.length && ranks[next] < cumulative) valueAt.set(ranks[next++], v);
  }
  if (next < ranks.length) throw new RangeError(`The histogram holds fewer than ${n} pixels (total is wrong)`);
  const out = hs.map((h) => {
    const j = Math.floor(h);
    const lo = valueAt.get(j) as number;
    const hi = valueAt.get(Math.min(j + 1, n - 1)) as number;
    return lo + (hi - lo) * (h - j);
  });
  return out;
}
