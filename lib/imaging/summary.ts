import type { Histogram } from "./histogram";
import { countAt, statsFromHistogram } from "./histogram";
import { percentiles, STANDARD_PERCENTILES } from "./percentile";

export interface CompactHistogram {
  /** Raw values per bin; bin i counts values i·binWidth … (i+1)·binWidth − 1. */
  binWidth: number;
  counts: number[];
}

export interface PlaneSummary {
  count: number;
  min: number;
  max: number;
  mean: number;
  /** Population standard deviation. */
  sd: number;
  countAtZero: number;
  countAtCeiling: number;
  /** Percent (as a string key, e.g. "99.9") → raw value; exact type 7 from the integer histogram. */
  percentiles: Record<string, number>;
  histogram: CompactHistogram;
}

/** Sums an exact histogram into `bins` equal bins covering 0 … ceiling (for plots and the library). */
export function compactHistogram(hist: Histogram, ceiling: number, bins = 256): CompactHistogram {
  const binWidth = Math.max(1, Math.ceil((ceiling + 1) / bins));
  const counts = new Array<number>(Math.ceil((ceiling + 1) / binWidth)).fill(0);
  const last = Math.min(hist.length - 1, ceiling);
  // Bin by bin rather than a division per value: the ingest calls this for every plane and every
  // candidate ceiling. Sums run over v in the same ascending order, so they are the same numbers.
  for (let bin = 0, v = 0; v <= last; bin++) {
    const end = Math.min(last, v + binWidth - 1);
    let sum = 0;
    for (; v <= end; v++) sum += hist[v];
    counts[bin] = sum;
  }
  return { binWidth, counts };
}

export function summarise(hist: Histogram, ceiling: number): PlaneSummary {
  const stats = statsFromHistogram(hist, ceiling);
  const values = percentiles(hist, STANDARD_PERCENTILES, stats.count);
  return {
    count: stats.count,
    min: stats.min,
    max: stats.max,
    mean: stats.mean,
    sd: stats.sd,
    countAtZero: stats.countAtZero,
    countAtCeiling: stats.countAtCeiling ?? 0,
    percentiles: Object.fromEntries(STANDARD_PERCENTILES.map((p, i) => [String(p), values[i]])),
    histogram: compactHistogram(hist, ceiling),
  };
}

/**
 * The same summary for several candidate ceilings at once (the ingest does not know the ceiling until
 * the whole stack is read): statistics and percentiles are computed once, only the counts at each
 * ceiling and the compact histograms differ.
 */
export function summariseForCeilings(hist: Histogram, ceilings: readonly number[]): Map<number, PlaneSummary> {
  const stats = statsFromHistogram(hist);
  const values = percentiles(hist, STANDARD_PERCENTILES, stats.count);
  const shared = {
    count: stats.count,
    min: stats.min,
    max: stats.max,
    mean: stats.mean,
    sd: stats.sd,
    countAtZero: stats.countAtZero,
    percentiles: Object.fromEntries(STANDARD_PERCENTILES.map((p, i) => [String(p), values[i]])),
  };
  return new Map(ceilings.map((ceiling) => [ceiling, { ...shared, countAtCeiling: countAt(hist, ceiling), histogram: compactHistogram(hist, ceiling) }]));
}
