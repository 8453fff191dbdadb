// Clipping marks: pixels at the ceiling (or in the highest chosen %) painted in one mark colour,
// pixels at or below the black point (or in the lowest chosen %) in another. Marks change only
// the displayed colours; raw values are only read.
//
// Default colours are chosen by the code (LOOK.md, "Clipping-mark defaults"): from a small
// candidate set, the colour with the largest minimum CIEDE2000 distance to the active colour table
// entries and the visible channel colours.
import type { ColourTable, Rgb } from "./colour-tables";
import { parseHex } from "./colour-tables";
import { deltaE2000Lab, srgbToLab, type Lab } from "./colour-difference";
import { histogram16, type Histogram } from "./histogram";
import { packRgba } from "./lut";

/** Saturated primaries and secondaries, orange and white: few enough to score quickly, spread over hue. */
export const MARK_CANDIDATES: readonly string[] = ["#FF0000", "#0000FF", "#00FF00", "#00FFFF", "#FF00FF", "#FFFF00", "#FF8000", "#FFFFFF"];

export interface MarkChoice {
  high: Rgb;
  low: Rgb;
  /** Smallest ΔE00 from each mark to the colours it must stand out from. */
  highDistance: number;
  lowDistance: number;
}

function toRgb(c: Rgb | string): Rgb {
  return typeof c === "string" ? parseHex(c) : c;
}

/** Distinct colours of the tables and channel colours, as Lab (tables repeat many entries). */
function contextLabs(activeTableColours: readonly (ColourTable | Rgb | string)[], channelColours: readonly (Rgb | string)[]): Lab[] {
  const seen = new Map<number, Lab>();
  const add = (r: number, g: number, b: number) => {
    const key = (r << 16) | (g << 8) | b;
    if (!seen.has(key)) seen.set(key, srgbToLab([r, g, b]));
  };
  for (const item of activeTableColours) {
    if (typeof item === "string" || Array.isArray(item)) {
      const [r, g, b] = toRgb(item as Rgb | string);
      add(r, g, b);
    } else {
      const { rgb } = item as ColourTable;
      for (let i = 0; i < rgb.length; i += 3) add(rgb[i], rgb[i + 1], rgb[i + 2]);
    }
  }
  for (const c of channelColours) add(...toRgb(c));
  return [...seen.values()];
}

function minDistance(lab: Lab, others: readonly Lab[]): number {
  let best = Infinity;
  for (const o of others) best = Math.min(best, deltaE2000Lab(lab, o));
  return best;
}

/**
 * Picks the high mark as the candidate farthest (largest minimum ΔE00) from every active table
 * entry and visible channel colour; then the low mark the same way, from the remaining candidates,
 * with the high mark added to the colours it must stand out from, so the two marks always differ.
 * Ties keep the candidate order.
 */
export function chooseMarkColours(
  activeTableColours: readonly (ColourTable | Rgb | string)[],
  channelColours: readonly (Rgb | string)[],
  candidates: readonly (Rgb | string)[] = MARK_CANDIDATES,
): MarkChoice {
  if (candidates.length < 2) throw new RangeError("Need at least two candidate mark colours");
  const context = contextLabs(activeTableColours, channelColours);
  const cands = candidates.map((c) => ({ rgb: toRgb(c), lab: srgbToLab(toRgb(c)) }));
  const pick = (pool: typeof cands, against: Lab[]) => {
    let best = pool[0];
    let bestD = -1;
    for (const c of pool) {
      const d = minDistance(c.lab, against);
      if (d > bestD) {
        best = c;
        bestD = d;
      }
    }
    return { best, distance: bestD };
  };
  const high = pick(cands, context);
  const low = pick(
    cands.filter((c) => c !== high.best),
    [...context, high.best.lab],
  );
  return { high: high.best.rgb, low: low.best.rgb, highDistance: high.distance, lowDistance: low.distance };
}

export interface ClipMarkOptions {
  ceiling: number;
  black: number;
  highColour: Rgb | string;
  lowColour: Rgb | string;
  /** "black": mark values ≤ black; "percent": mark the lowest `lowPercent` % of pixels. */
  lowMode: "black" | "percent";
  /** Also mark the highest `highPercent` % of pixels (pixels at the ceiling are always marked). */
  highPercent?: number;
  lowPercent?: number;
  /** Histogram of `pixels`, if already known (needed for the percent modes; computed otherwise). */
  hist?: Histogram;
}

export interface ClipThresholds {
  /** Values ≥ highFrom get the high mark. */
  highFrom: number;
  /** Values ≤ lowTo get the low mark (−1: none). The high mark wins where both apply. */
  lowTo: number;
}

/**
 * The highest values whose pixels together make at most `percent` % of the total, as the smallest
 * such value present in the histogram (hist.length when none fit). Whole values only: pixels with equal raw values are
 * never split between marked and unmarked, so a mark always means "this value and above".
 */
export function topPercentFrom(hist: Histogram, percent: number): number {
  let total = 0;
  for (let v = 0; v < hist.length; v++) total += hist[v];
  const limit = (total * percent) / 100;
  let acc = 0;
  let from = hist.length;
  for (let v = hist.length - 1; v >= 0; v--) {
    if (acc + hist[v] > limit) break;
    acc += hist[v];
    if (hist[v] > 0) from = v;
  }
  return from;
}

/** The mirror of topPercentFrom: the largest present value such that pixels ≤ it are at most `percent` % (−1 when none fit). */
export function bottomPercentTo(hist: Histogram, percent: number): number {
  let total = 0;
  for (let v = 0; v < hist.length; v++) total += hist[v];
  const limit = (total * percent) / 100;
  let acc = 0;
  let to = -1;
  for (let v = 0; v < hist.length; v++) {
    if (acc + hist[v] > limit) break;
    acc += hist[v];
    if (hist[v] > 0) to = v;
  }
  return to;
}

function checkPercent(name: string, p: number | undefined): void {
  if (p !== undefined && !(p >= 0 && p <= 100)) throw new RangeError(`${name} must be 0…100 (percent), got ${p}`);
}

/** The value thresholds the marks use (whole raw values). */
export function clipThresholds(pixels: Uint16Array | Uint8Array, options: ClipMarkOptions): ClipThresholds {
  checkPercent("highPercent", options.highPercent);
  checkPercent("lowPercent", options.lowPercent);
  const needHist = options.highPercent !== undefined || options.lowMode === "percent";
  const hist = needHist ? (options.hist ?? histogram16(pixels)) : undefined;
  let highFrom = options.ceiling;
  if (hist && options.highPercent !== undefined) highFrom = Math.min(highFrom, topPercentFrom(hist, options.highPercent));
  let lowTo: number;
  if (options.lowMode === "percent") {
    if (options.lowPercent === undefined) throw new RangeError('lowMode "percent" needs lowPercent');
    lowTo = bottomPercentTo(hist as Histogram, options.lowPercent);
  } else lowTo = Math.floor(options.black);
  return { highFrom, lowTo };
}

/**
 * Paints the marks over already mapped RGBA (`rgbaOut`, one packed word per pixel, see lut.ts):
 * values ≥ highFrom in the high colour, values ≤ lowTo in the low colour (high wins). Branch-free
 * per pixel: a 65,536-entry class table (0 none, 1 low, 2 high) selects a keep-mask and a paint
 * word. Returns the thresholds and how many pixels got each mark.
 */
export function applyClipMarks(pixels: Uint16Array | Uint8Array, rgbaOut: Uint32Array, options: ClipMarkOptions): ClipThresholds & { high: number; low: number } {
  if (rgbaOut.length < pixels.length) throw new RangeError(`rgbaOut holds ${rgbaOut.length} pixels, need ${pixels.length}`);
  const t = clipThresholds(pixels, options);
  const size = pixels instanceof Uint8Array ? 256 : 65536;
  const cls = new Uint8Array(size);
  if (t.lowTo >= 0) cls.fill(1, 0, Math.min(size, t.lowTo + 1));
  if (t.highFrom < size) cls.fill(2, Math.max(0, t.highFrom));
  const keep = new Uint32Array([0xffffffff, 0, 0]);
  const paint = new Uint32Array([0, packRgba(...toRgb(options.lowColour)), packRgba(...toRgb(options.highColour))]);
  const counts = new Float64Array(3);
  for (let i = 0; i < pixels.length; i++) {
    const m = cls[pixels[i]];
    rgbaOut[i] = (rgbaOut[i] & keep[m]) | paint[m];
    counts[m]++;
  }
  return { ...t, high: counts[2], low: counts[1] };
}

/**
 * The single-channel fast path: a copy of an rgbaLut with the marks written into it, so mapping
 * and marking stay one lookup per pixel (mapChannel).
 */
export function clipMarkRgbaLut(rgbaLut: Uint32Array, thresholds: ClipThresholds, highColour: Rgb | string, lowColour: Rgb | string): Uint32Array {
  const out = rgbaLut.slice();
  if (thresholds.lowTo >= 0) out.fill(packRgba(...toRgb(lowColour)), 0, Math.min(out.length, thresholds.lowTo + 1));
  if (thresholds.highFrom < out.length) out.fill(packRgba(...toRgb(highColour)), Math.max(0, thresholds.highFrom));
  return out;
}
