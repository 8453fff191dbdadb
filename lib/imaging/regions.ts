// Regions of interest on a plane: shapes in image pixel coordinates, their pixel masks, statistics
// per channel, line profiles and traces over planes. Pure functions over typed arrays (no DOM).
//
// Coordinates: x to the right, y down, in image pixels; pixel (i, j) covers [i, i+1) × [j, j+1), so
// its centre is (i + 0.5, j + 0.5). Shapes may be fractional and may reach outside the image.
//
// Membership rule (rasterising): a pixel belongs to a region when its CENTRE is inside the shape:
// - rect: x ≤ cx < x + width and y ≤ cy < y + height (half-open, so two rectangles that share an
//   edge never share a pixel);
// - ellipse: ((cx − ex)/rx)² + ((cy − ey)/ry)² ≤ 1;
// - polygon: the even–odd rule, by casting a ray from the centre towards +x and counting edge
//   crossings with the usual half-open vertex test ((yi > cy) ≠ (yj > cy)), so a vertex on the ray is
//   counted once; a centre exactly on an edge belongs or not as that arithmetic decides.
// - line: no area (see lineProfile).

export type RegionKind = "rect" | "ellipse" | "polygon" | "line";

export interface RectShape {
  kind: "rect";
  x: number;
  y: number;
  width: number;
  height: number;
}
export interface EllipseShape {
  kind: "ellipse";
  /** Centre and semi-axes, image pixels. */
  cx: number;
  cy: number;
  rx: number;
  ry: number;
}
export interface PolygonShape {
  kind: "polygon";
  /** Vertices in order; the last joins the first. */
  points: [number, number][];
}
export interface LineShape {
  kind: "line";
  x1: number;
  y1: number;
  x2: number;
  y2: number;
}
export type AreaShape = RectShape | EllipseShape | PolygonShape;
export type RegionShape = AreaShape | LineShape;

/** Pixel indices (y · width + x, ascending) of the pixels inside `shape`, clipped to the image. */
export function regionMask(shape: AreaShape, width: number, height: number): Uint32Array {
  const box = boundingBox(shape);
  // Only centres within the box can be inside: columns i with i + 0.5 ≥ x0, i.e. i ≥ ceil(x0 − 0.5).
  const i0 = Math.max(0, Math.ceil(box.x0 - 0.5));
  const i1 = Math.min(width - 1, Math.floor(box.x1 - 0.5));
  const j0 = Math.max(0, Math.ceil(box.y0 - 0.5));
  const j1 = Math.min(height - 1, Math.floor(box.y1 - 0.5));
  const out: number[] = [];
  const inside = insideTest(shape);
  for (let j = j0; j <= j1; j++) {
    const cy = j + 0.5;
    for (let i = i0; i <= i1; i++) if (inside(i + 0.5, cy)) out.push(j * width + i);
  }
  return Uint32Array.from(out);
}

function boundingBox(shape: AreaShape): { x0: number; y0: number; x1: number; y1: number } {
  switch (shape.kind) {
    case "rect":
      return { x0: shape.x, y0: shape.y, x1: shape.x + shape.width, y1: shape.y + shape.height };
    case "ellipse":
      return { x0: shape.cx - shape.rx, y0: shape.cy - shape.ry, x1: shape.cx + shape.rx, y1: shape.cy + shape.ry };
    case "polygon": {
      const xs = shape.points.map((p) => p[0]);
      const ys = shape.points.map((p) => p[1]);
      return { x0: Math.min(...xs), y0: Math.min(...ys), x1: Math.max(...xs), y1: Math.max(...ys) };
    }
  }
}

/** The centre test of the membership rule above, for one shape. */
export function insideTest(shape: AreaShape): (x: number, y: number) => boolean {
  switch (shape.kind) {
    case "rect": {
      const { x, y, width, height } = shape;
      return (px, py) => px >= x && px < x + width && py >= y && py < y + height;
    }
    case "ellipse": {
      const { cx, cy, rx, ry } = shape;
      if (!(rx > 0 && ry > 0)) return () => false;
      return (px, py) => {
        const u = (px - cx) / rx;
        const v = (py - cy) / ry;
        return u * u + v * v <= 1;
      };
    }
    case "polygon": {
      const pts = shape.points;
      return (px, py) => {
        let inside = false;
        for (let a = 0, b = pts.length - 1; a < pts.length; b = a++) {
          const [xi, yi] = pts[a];
          const [xj, yj] = pts[b];
          if (yi > py !== yj > py && px < ((xj - xi) * (py - yi)) / (yj - yi) + xi) inside = !inside;
        }
        return inside;
      };
    }
  }
}

export interface RegionStats {
  /** Pixels inside the region (also the count the statistics are over, minus any invalid ones). */
  areaPx: number;
  /** areaPx × pixel width × pixel height, µm²; null when the pixel size is unknown. */
  areaUm2: number | null;
  /** Values the statistics are over (fewer than areaPx when some corrected values are invalid). */
  count: number;
  mean: number;
  /** Population standard deviation (divides by count), two-pass. */
  sd: number;
  min: number;
  max: number;
  sum: number;
  /** Raw pixels at or above the ceiling: saturated, not to be quantified. */
  countAtCeiling: number;
}

export interface StatsOptions {
  ceiling: number;
  /** µm per pixel along x and y; either null → areaUm2 null. */
  pixelSizeUm?: { x: number | null | undefined; y: number | null | undefined } | null;
  /**
   * Values to take the statistics of instead of `raw` (e.g. flat/dark-corrected, NaN = invalid and
   * left out). Saturation is always counted on `raw`: it is a property of the measurement.
   */
  values?: ArrayLike<number>;
}

/** Statistics of one channel's pixels inside a mask. NaN statistics (and 0 sum) for an empty set. */
export function regionStats(raw: ArrayLike<number>, mask: Uint32Array, options: StatsOptions): RegionStats {
  const values = options.values ?? raw;
  let count = 0;
  let sum = 0;
  let min = Infinity;
  let max = -Infinity;
  let saturated = 0;
  for (let k = 0; k < mask.length; k++) {
    const i = mask[k];
    if (raw[i] >= options.ceiling) saturated++;
    const v = values[i];
    if (v !== v) continue;
    count++;
    sum += v;
    if (v < min) min = v;
    if (v > max) max = v;
  }
  const mean = count > 0 ? sum / count : NaN;
  let squares = 0;
  for (let k = 0; k < mask.length; k++) {
    const v = values[mask[k]];
    if (v === v) squares += (v - mean) * (v - mean);
  }
  const px = options.pixelSizeUm;
  return {
    areaPx: mask.length,
    areaUm2: px && px.x && px.y ? mask.length * px.x * px.y : null,
    count,
    mean,
    sd: count > 0 ? Math.sqrt(squares / count) : NaN,
    min: count > 0 ? min : NaN,
    max: count > 0 ? max : NaN,
    sum,
    countAtCeiling: saturated,
  };
}

/** A detector's offset (DN) and system gain K (DN per photoelectron, EMVA 1288). */
export interface DetectorScale {
  offsetDn: number;
  gainDnPerE: number;
}

/**
 * Statistics in photoelectrons: e = (DN − offset) / K. A linear map, so mean, min, max move the same
 * way, sd scales by 1/K, and the sum is (sum − count · offset) / K. Area and saturation are unchanged.
 */
export function statsInElectrons(s: RegionStats, d: DetectorScale): RegionStats {
  const k = d.gainDnPerE;
  return {
    ...s,
    mean: (s.mean - d.offsetDn) / k,
    sd: s.sd / k,
    min: (s.min - d.offsetDn) / k,
    max: (s.max - d.offsetDn) / k,
    sum: (s.sum - s.count * d.offsetDn) / k,
  };
}

/**
 * Values along a line, one per unit step: samples at distance 0, 1, 2, … ⌊length⌋ from (x1, y1)
 * towards (x2, y2); each takes the NEAREST PIXEL, i.e. the pixel that contains the sample point
 * (⌊x⌋, ⌊y⌋) — no interpolation, so every value is a stored value. Drawn lines run between pixel
 * centres, so a horizontal line through centres reads consecutive pixels. Samples outside the image
 * are NaN. `distance` is in pixels from the start.
 */
export function lineProfile(values: ArrayLike<number>, width: number, height: number, line: LineShape): { distance: number[]; value: number[] } {
  const dx = line.x2 - line.x1;
  const dy = line.y2 - line.y1;
  const length = Math.hypot(dx, dy);
  const n = Math.floor(length + 1e-9) + 1;
  const distance: number[] = [];
  const value: number[] = [];
  for (let k = 0; k < n; k++) {
    const f = length > 0 ? k / length : 0;
    const x = Math.floor(line.x1 + dx * f);
    const y = Math.floor(line.y1 + dy * f);
    distance.push(k);
    value.push(x >= 0 && y >= 0 && x < width && y < height ? Number(values[y * width + x]) : NaN);
  }
  return { distance, value };
}

/** Raw pixels of a line at or above the ceiling (same samples as lineProfile). */
export function lineSaturated(raw: ArrayLike<number>, width: number, height: number, line: LineShape, ceiling: number): number {
  return lineProfile(raw, width, height, line).value.filter((v) => v >= ceiling).length;
}

export interface TracePoint {
  /** Mean inside the region, minus the background's mean when a background is given. */
  mean: number;
  /** Sum inside the region, minus background mean × count when a background is given. */
  sum: number;
  /** The background region's mean on this plane (null without one). */
  background: number | null;
  countAtCeiling: number;
}

/**
 * One plane's trace point. Background subtraction: the background region's mean value per pixel on
 * the same plane and channel is subtracted from every pixel of the region, so
 * mean' = mean − mean_bg and sum' = sum − mean_bg · count (common practice).
 */
export function tracePoint(raw: ArrayLike<number>, mask: Uint32Array, background: Uint32Array | null, options: StatsOptions): TracePoint {
  const s = regionStats(raw, mask, options);
  if (!background) return { mean: s.mean, sum: s.sum, background: null, countAtCeiling: s.countAtCeiling };
  const bg = regionStats(raw, background, options).mean;
  return { mean: s.mean - bg, sum: s.sum - bg * s.count, background: bg, countAtCeiling: s.countAtCeiling };
}

/** A trace point in photoelectrons (see statsInElectrons); background subtraction cancels the offset. */
export function traceInElectrons(p: TracePoint, count: number, d: DetectorScale): TracePoint {
  const k = d.gainDnPerE;
  if (p.background === null) return { ...p, mean: (p.mean - d.offsetDn) / k, sum: (p.sum - count * d.offsetDn) / k };
  return { ...p, mean: p.mean / k, sum: p.sum / k, background: (p.background - d.offsetDn) / k };
}
