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
    if (pixels instanceof Uint16Array) {
      // Two pixels per 32-bit read (both halves are counted, so the host's byte order does not
      // matter). The reads start at the first 4-byte boundary; a pixel before it and one after the
      // last whole word are counted on their own.
      const head = pixels.length > 0 && pixels.byteOffset % 4 !== 0 ? 1 : 0;
      const pairs = (pixels.length - head) >> 1;
      if (pairs > 0) {
        const scratch = pairScratch();
        countPairs(scratch, new Int32Array(pixels.buffer, pixels.byteOffset + 2 * head, pairs), pairs);
        moveCounts(scratch, counts);
      }
      if (head) counts[pixels[0]]++;
      if (head + 2 * pairs < pixels.length) counts[pixels[pixels.length - 1]]++;
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
 * The 65,536 counters of the word loop, all 0 between calls. A plain array that V8 stores as
 * unboxed doubles, not a typed array: once any ArrayBuffer in the process has been transferred (the
 * bench worker transfers every rendered frame; the checks also show under tsx), V8's optimised code
 * checks before every typed-array access that the buffer was not detached, and plain arrays skip
 * that check; doubles also skip the small-integer tagging and overflow checks. About 13 instead of
 * 21 machine instructions per pixel (V8 11.3), and faster even where no buffer was ever transferred.
 * Counts stay exact up to 2⁵³.
 */
const pairCounts: number[] = [];

function pairScratch(): number[] {
  if (pairCounts.length === 0) {
    // A fraction first makes the array's storage doubles for good; then every counter is set to 0.
    pairCounts.push(0.5);
    while (pairCounts.length < 65536) pairCounts.push(0);
    pairCounts[0] = 0;
  }
  return pairCounts;
}

/**
 * Moves the scratch counts into `counts` (all 0) and zeroes the scratch for the next call. Only
 * non-zero bins are written: camera planes fill a few thousand of the 65,536 bins, and skipping the
 * rest takes about 0.15 ms off each plane.
 */
function moveCounts(scratch: number[], counts: Uint32Array): void {
  for (let v = 0; v < 65536; v++) {
    const n = scratch[v];
    if (n !== 0) {
      counts[v] = n;
      scratch[v] = 0;
    }
  }
}

/**
 * The counting loop of histogram16: `words` holds two pixels each, `counts` has 65,536 bins. It is
 * its own function with the arrays as parameters and unrolled by eight words, which V8 compiles to
 * markedly tighter code than the same loop inline (tests/bench/pixels.ts: about 25 % faster on a
 * 2048² camera plane). Offsets are written (i + 1) | 0 so V8 drops the overflow check on each index.
 */
function countPairs(counts: number[], words: Int32Array, pairs: number): void {
  let i = 0;
  for (; i + 7 < pairs; i += 8) {
    const a = words[i];
    const b = words[(i + 1) | 0];
    const c = words[(i + 2) | 0];
    const d = words[(i + 3) | 0];
    const e = words[(i + 4) | 0];
    const f = words[(i + 5) | 0];
    const g = words[(i + 6) | 0];
    const h = words[(i + 7) | 0];
    counts[a & 0xffff]++;
    counts[a >>> 16]++;
    counts[b & 0xffff]++;
    counts[b >>> 16]++;
    counts[c & 0xffff]++;
    counts[c >>> 16]++;
    counts[d & 0xffff]++;
    counts[d >>> 16]++;
    counts[e & 0xffff]++;
    counts[e >>> 16]++;
    counts[f & 0xffff]++;
    counts[f >>> 16]++;
    counts[g & 0xffff]++;
    counts[g >>> 16]++;
    counts[h & 0xffff]++;
    counts[h >>> 16]++;
  }
  for (; i < pairs; i++) {
    const a = words[i];
    counts[a & 0xffff]++;
    counts[a >>> 16]++;
  }
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
