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

// ---- Editing shapes by handles -------------------------------------------------------------------
//
// Snapping follows drawing: rectangle, ellipse and polygon corners sit on pixel edges (whole numbers,
// 0 … width or height), so the pixels a region holds are the ones its outline encloses; line ends sit
// on pixel centres (n + 0.5, inside the image), so a profile reads whole pixels.

export interface Point {
  x: number;
  y: number;
}

/** The nearest pixel edge, clamped to the image (what rectangle, ellipse and polygon corners use). */
export function snapToEdge(p: Point, width: number, height: number): Point {
  const snap = (v: number, max: number) => Math.min(max, Math.max(0, Math.round(v)));
  return { x: snap(p.x, width), y: snap(p.y, height) };
}

/** The centre of the pixel under the point, clamped to the image (what line ends use). */
export function snapToCentre(p: Point, width: number, height: number): Point {
  const snap = (v: number, max: number) => Math.min(max - 1, Math.max(0, Math.floor(v))) + 0.5;
  return { x: snap(p.x, width), y: snap(p.y, height) };
}

/** A corner of a bounding box: north-west is the top left (y grows downwards). */
export type Corner = "nw" | "ne" | "sw" | "se";

/** One grip of a shape: a bounding-box corner, a polygon vertex or a line end. */
export type HandleId = { kind: "corner"; corner: Corner } | { kind: "vertex"; index: number } | { kind: "end"; end: 1 | 2 };

export interface Handle {
  id: HandleId;
  /** A short stable name ("se", "v2", "end1"), e.g. for test ids. */
  key: string;
  /** Where the handle sits, image pixels. */
  x: number;
  y: number;
}

function boxOf(shape: RectShape | EllipseShape): { x0: number; y0: number; x1: number; y1: number } {
  return shape.kind === "rect"
    ? { x0: shape.x, y0: shape.y, x1: shape.x + shape.width, y1: shape.y + shape.height }
    : { x0: shape.cx - shape.rx, y0: shape.cy - shape.ry, x1: shape.cx + shape.rx, y1: shape.cy + shape.ry };
}

/** The handles of a shape: four bounding-box corners (rect, ellipse), every vertex, or both line ends. */
export function handlesOf(shape: RegionShape): Handle[] {
  switch (shape.kind) {
    case "rect":
    case "ellipse": {
      const b = boxOf(shape);
      const corners: [Corner, number, number][] = [["nw", b.x0, b.y0], ["ne", b.x1, b.y0], ["sw", b.x0, b.y1], ["se", b.x1, b.y1]];
      return corners.map(([corner, x, y]) => ({ id: { kind: "corner", corner }, key: corner, x, y }));
    }
    case "polygon":
      return shape.points.map(([x, y], index) => ({ id: { kind: "vertex", index }, key: `v${index}`, x, y }));
    case "line":
      return [
        { id: { kind: "end", end: 1 }, key: "end1", x: shape.x1, y: shape.y1 },
        { id: { kind: "end", end: 2 }, key: "end2", x: shape.x2, y: shape.y2 },
      ];
  }
}

/**
 * Resizes a rectangle or an ellipse by one corner of its bounding box: that corner goes to `point`,
 * the opposite corner stays where it is. The dragged corner cannot cross the fixed one: width and
 * height stay at least `minSize` (1 pixel by default), so a region never collapses to no pixels and
 * keeps its orientation (the handle under the pointer stays the same corner).
 */
export function resizeBox<S extends RectShape | EllipseShape>(shape: S, corner: Corner, point: Point, minSize = 1): S {
  let { x0, y0, x1, y1 } = boxOf(shape);
  if (corner === "nw" || corner === "sw") x0 = Math.min(point.x, x1 - minSize);
  else x1 = Math.max(point.x, x0 + minSize);
  if (corner === "nw" || corner === "ne") y0 = Math.min(point.y, y1 - minSize);
  else y1 = Math.max(point.y, y0 + minSize);
  if (shape.kind === "rect") return { ...shape, x: x0, y: y0, width: x1 - x0, height: y1 - y0 };
  return { ...shape, cx: (x0 + x1) / 2, cy: (y0 + y1) / 2, rx: (x1 - x0) / 2, ry: (y1 - y0) / 2 };
}

/** Moves one vertex of a polygon (the others stay). An index outside the polygon changes nothing. */
export function moveVertex(shape: PolygonShape, index: number, point: Point): PolygonShape {
  if (index < 0 || index >= shape.points.length) return shape;
  return { ...shape, points: shape.points.map((p, i) => (i === index ? [point.x, point.y] : [p[0], p[1]])) };
}

/** Moves one end of a line. A move onto the other end is refused (a line needs two ends): unchanged. */
export function moveLineEnd(shape: LineShape, end: 1 | 2, point: Point): LineShape {
  const other = end === 1 ? { x: shape.x2, y: shape.y2 } : { x: shape.x1, y: shape.y1 };
  if (other.x === point.x && other.y === point.y) return shape;
  return end === 1 ? { ...shape, x1: point.x, y1: point.y } : { ...shape, x2: point.x, y2: point.y };
}

/**
 * The shape after dragging one of its handles to `point` (image pixels, unsnapped): the point is
 * snapped as drawing snaps (see above) to an image of `width` × `height`, then applied.
 */
export function dragHandle(shape: RegionShape, id: HandleId, point: Point, width: number, height: number): RegionShape {
  if (shape.kind === "line") return id.kind === "end" ? moveLineEnd(shape, id.end, snapToCentre(point, width, height)) : shape;
  const p = snapToEdge(point, width, height);
  if (shape.kind === "polygon") return id.kind === "vertex" ? moveVertex(shape, id.index, p) : shape;
  return id.kind === "corner" ? resizeBox(shape, id.corner, p) : shape;
}
