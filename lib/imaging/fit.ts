// Fit: black and white points from percentiles of the exact integer histogram (no sort), for a
// plane, a whole stack (merged ingest histograms) or the visible area (regionHistogram).
import type { Histogram } from "./histogram";
import { percentiles } from "./percentile";

/** (n − 1)·0.999 can come out as 9990.000000000002: snap such float dust to the whole count first. */
function snap(x: number): number {
  const r = Math.round(x);
  return Math.abs(x - r) < 1e-9 ? r : x;
}

export interface FitOptions {
  /** Lower percentile in percent (default 0.1). */
  low?: number;
  /** Upper percentile in percent (default 99.9). */
  high?: number;
  /** Highest possible value (default: the histogram's last bin). Keeps white within 0 … ceiling. */
  ceiling?: number;
}

export interface FitRange {
  black: number;
  white: number;
}

/**
 * Black/white points from the `low` and `high` percentiles (Hyndman & Fan 1996 type 7, the same
 * numbers as d3-array's quantile and numpy's default; percentile.ts) of an exact histogram holding
 * `total` pixels.
 *
 * Rounding to whole counts, outwards: black = floor(P_low), white = ceil(P_high) (after snapping
 * values within 1e-9 of a whole count, i.e. float dust from (n − 1)·p), so every value
 * between the two percentiles keeps a level strictly inside the mapping and each bound is within one
 * count of the type-7 value. White is always above black: if they meet (a flat image, or all values
 * equal), white = black + 1, or black = white − 1 at the ceiling. An empty histogram (total 0, e.g.
 * a region outside the image) gives the full range 0 … ceiling.
 */
export function fitRange(hist: Histogram, total: number, options: FitOptions = {}): FitRange {
  const { low = 0.1, high = 99.9 } = options;
  const ceiling = options.ceiling ?? hist.length - 1;
  if (!(low < high)) throw new RangeError(`low (${low}) must be below high (${high})`);
  if (!Number.isInteger(ceiling) || ceiling < 1) throw new RangeError(`ceiling must be an integer ≥ 1, got ${ceiling}`);
  if (total === 0) return { black: 0, white: ceiling };
  const [pLow, pHigh] = percentiles(hist, [low, high], total);
  let black = Math.max(0, Math.floor(snap(pLow)));
  let white = Math.min(ceiling, Math.ceil(snap(pHigh)));
  if (white <= black) {
    if (black < ceiling) white = black + 1;
    else {
      white = ceiling;
      black = ceiling - 1;
    }
  }
  return { black, white };
}

/** A rectangle in image pixel coordinates (x to the right, y down; may be fractional or partly outside). */
export interface ImageRect {
  x: number;
  y: number;
  width: number;
  height: number;
}

/**
 * Exact histogram of the pixels inside `rect` (the visible area) of a plane `width` pixels wide.
 * Every pixel the rectangle touches counts: columns floor(x) … ceil(x + width) − 1, clipped to the
 * plane. Bins: 65,536 for 16-bit pixels, 256 for 8-bit. Returns the histogram and its pixel count.
 */
export function regionHistogram(pixels: Uint16Array | Uint8Array, width: number, rect: ImageRect): { hist: Uint32Array; total: number } {
  if (!Number.isInteger(width) || width < 1 || pixels.length % width !== 0) throw new RangeError(`width ${width} does not divide ${pixels.length} pixels`);
  const height = pixels.length / width;
  const hist = new Uint32Array(pixels instanceof Uint8Array ? 256 : 65536);
  const x0 = Math.max(0, Math.floor(rect.x));
  const x1 = Math.min(width, Math.ceil(rect.x + rect.width));
  const y0 = Math.max(0, Math.floor(rect.y));
  const y1 = Math.min(height, Math.ceil(rect.y + rect.height));
  if (x1 <= x0 || y1 <= y0) return { hist, total: 0 };
  for (let y = y0; y < y1; y++) {
    const end = y * width + x1;
    for (let i = y * width + x0; i < end; i++) hist[pixels[i]]++;
  }
  return { hist, total: (x1 - x0) * (y1 - y0) };
}
