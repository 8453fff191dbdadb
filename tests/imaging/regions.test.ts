// Regions: masks by the pixel-centre rule, statistics, line profiles and trace points, checked by
// hand on small arrays and against an independent numpy computation (tests/fixtures/regions_ref.py)
// on the seeded 12-bit stack.
import { spawnSync } from "node:child_process";
import { resolve } from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { dragHandle, handlesOf, lineProfile, moveLineEnd, moveVertex, regionMask, regionStats, resizeBox, snapToCentre, snapToEdge, statsInElectrons, traceInElectrons, tracePoint, type AreaShape, type LineShape } from "@/lib/imaging/regions";
import { PYTHON, tempDir } from "@/tests/helpers/tiff-tools";
import { loadStackFixture, type StackFixture } from "./stack-fixture";
import { writeFileSync } from "node:fs";

describe("regionMask (pixel centre inside)", () => {
  it("takes exactly the 3 × 3 pixels of a whole-pixel rectangle", () => {
    const m = regionMask({ kind: "rect", x: 1, y: 1, width: 3, height: 3 }, 5, 5);
    expect(Array.from(m)).toEqual([6, 7, 8, 11, 12, 13, 16, 17, 18]);
  });

  it("takes a pixel only when its centre is covered (half-open edges)", () => {
    // x 0.4 … 1.5 covers the centre 0.5 but not 1.5 (right edge open).
    expect(Array.from(regionMask({ kind: "rect", x: 0.4, y: 0, width: 1.1, height: 1 }, 4, 1))).toEqual([0]);
    // Two rectangles sharing an edge never share a pixel.
    const a = regionMask({ kind: "rect", x: 0, y: 0, width: 2.5, height: 1 }, 5, 1);
    const b = regionMask({ kind: "rect", x: 2.5, y: 0, width: 2.5, height: 1 }, 5, 1);
    // The centre 2.5 lies on the shared edge: it belongs to the rectangle that starts there.
    expect(Array.from(a)).toEqual([0, 1]);
    expect(Array.from(b)).toEqual([2, 3, 4]);
  });

  it("clips to the image", () => {
    expect(regionMask({ kind: "rect", x: -10, y: -10, width: 12, height: 11 }, 4, 4).length).toBe(2);
    expect(regionMask({ kind: "rect", x: 10, y: 10, width: 2, height: 2 }, 4, 4).length).toBe(0);
  });

  it("draws a circle of radius 1.5 around a pixel centre as a plus of 5 … 9 pixels", () => {
    // Centre (2.5, 2.5): neighbours at distance 1 and √2 ≈ 1.41 are inside, distance 2 not: a 3 × 3 block.
    expect(regionMask({ kind: "ellipse", cx: 2.5, cy: 2.5, rx: 1.5, ry: 1.5 }, 5, 5).length).toBe(9);
    // Radius 1.2: the four diagonal neighbours (√2) fall outside: a plus of 5.
    expect(Array.from(regionMask({ kind: "ellipse", cx: 2.5, cy: 2.5, rx: 1.2, ry: 1.2 }, 5, 5))).toEqual([7, 11, 12, 13, 17]);
  });

  it("fills a polygon by the even–odd rule (a self-crossing bow tie leaves its middle out)", () => {
    // A triangle with vertices on pixel edges: half of a 4 × 4 square below the diagonal.
    const tri = regionMask({ kind: "polygon", points: [[0, 0], [4, 4], [0, 4]] }, 4, 4);
    // Centres (i + 0.5, j + 0.5) with i + 0.5 < j + 0.5 are inside; on the diagonal the crossing test decides.
    expect(tri.length).toBeGreaterThanOrEqual(6);
    expect(tri.length).toBeLessThanOrEqual(10);
    // Even-odd on a square traced twice in the same direction: every crossing counted twice → empty.
    expect(regionMask({ kind: "polygon", points: [[0, 0], [3, 0], [3, 3], [0, 3], [0, 0], [3, 0], [3, 3], [0, 3]] }, 3, 3).length).toBe(0);
  });
});

describe("regionStats", () => {
  // Values 1 … 25 in a 5 × 5 image; the centre 3 × 3 block holds 7 8 9 / 12 13 14 / 17 18 19.
  const img = Uint16Array.from({ length: 25 }, (_, i) => i + 1);
  const mask = regionMask({ kind: "rect", x: 1, y: 1, width: 3, height: 3 }, 5, 5);

  it("gives mean, population sd, min, max, sum and area of a 3 × 3 block (hand-checked)", () => {
    const s = regionStats(img, mask, { ceiling: 19, pixelSizeUm: { x: 0.5, y: 0.25 } });
    expect(s.areaPx).toBe(9);
    expect(s.areaUm2).toBeCloseTo(9 * 0.125, 12);
    expect(s.sum).toBe(117);
    expect(s.mean).toBe(13);
    // Deviations −6 −5 −4 −1 0 1 4 5 6: squares sum 2·(36+25+16+1) = 156; 156/9 = 17.333…
    expect(s.sd).toBeCloseTo(Math.sqrt(156 / 9), 12);
    expect([s.min, s.max]).toEqual([7, 19]);
    expect(s.countAtCeiling).toBe(1);
  });

  it("has no µm² without a pixel size, and NaN statistics for an empty region", () => {
    expect(regionStats(img, mask, { ceiling: 4095 }).areaUm2).toBeNull();
    const e = regionStats(img, new Uint32Array(), { ceiling: 4095 });
    expect(e.areaPx).toBe(0);
    expect(Number.isNaN(e.mean) && Number.isNaN(e.min)).toBe(true);
  });

  it("takes statistics of corrected values, leaving invalid ones out, but counts saturation on raw", () => {
    const values = Float32Array.from(img, (v) => v * 2);
    values[12] = NaN;
    const s = regionStats(img, mask, { ceiling: 19, values });
    expect(s.count).toBe(8);
    expect(s.areaPx).toBe(9);
    expect(s.sum).toBe(2 * (117 - 13));
    expect(s.countAtCeiling).toBe(1);
  });

  it("converts to photoelectrons by (DN − offset)/K", () => {
    const s = statsInElectrons(regionStats(img, mask, { ceiling: 4095 }), { offsetDn: 3, gainDnPerE: 0.5 });
    expect(s.mean).toBe(20);
    expect(s.min).toBe(8);
    expect(s.sum).toBe((117 - 9 * 3) / 0.5);
    expect(s.sd).toBeCloseTo(Math.sqrt(156 / 9) / 0.5, 12);
  });
});

describe("tracePoint and lineProfile", () => {
  const img = Uint16Array.from({ length: 25 }, (_, i) => i + 1);
  it("subtracts the background's mean per pixel", () => {
    const mask = regionMask({ kind: "rect", x: 1, y: 1, width: 3, height: 3 }, 5, 5);
    const bg = regionMask({ kind: "rect", x: 0, y: 0, width: 2, height: 1 }, 5, 5); // values 1, 2 → mean 1.5
    const p = tracePoint(img, mask, bg, { ceiling: 4095 });
    expect(p.background).toBe(1.5);
    expect(p.mean).toBe(13 - 1.5);
    expect(p.sum).toBe(117 - 1.5 * 9);
    // With a background, the offset cancels: only the gain scales.
    expect(traceInElectrons(p, 9, { offsetDn: 1, gainDnPerE: 2 }).mean).toBe((13 - 1.5) / 2);
    expect(traceInElectrons(tracePoint(img, mask, null, { ceiling: 4095 }), 9, { offsetDn: 1, gainDnPerE: 2 }).mean).toBe(6);
  });

  it("reads the nearest pixel at unit steps between pixel centres", () => {
    expect(lineProfile(img, 5, 5, { kind: "line", x1: 0.5, y1: 2.5, x2: 4.5, y2: 2.5 })).toEqual({ distance: [0, 1, 2, 3, 4], value: [11, 12, 13, 14, 15] });
    // Vertical, reversed direction.
    expect(lineProfile(img, 5, 5, { kind: "line", x1: 1.5, y1: 4.5, x2: 1.5, y2: 2.5 }).value).toEqual([22, 17, 12]);
    // Off the image: NaN.
    expect(lineProfile(img, 5, 5, { kind: "line", x1: 3.5, y1: 0.5, x2: 6.5, y2: 0.5 }).value.map((v) => (Number.isNaN(v) ? null : v))).toEqual([4, 5, null, null]);
  });
});

describe("against numpy on the seeded 12-bit stack", () => {
  let fx: StackFixture;
  let planesPath: string;
  let tmp: ReturnType<typeof tempDir>;
  beforeAll(() => {
    fx = loadStackFixture();
    tmp = tempDir("regions");
    planesPath = tmp.path("planes.u16le");
    const all = new Uint16Array(fx.planes.length * fx.width * fx.height);
    fx.planes.forEach((p, i) => all.set(p, i * p.length));
    writeFileSync(planesPath, Buffer.from(all.buffer));
  });
  afterAll(() => {
    fx?.remove();
    tmp?.remove();
  });

  const shapes: AreaShape[] = [
    { kind: "rect", x: 3, y: 2, width: 11, height: 7 },
    { kind: "rect", x: -2.3, y: -1.7, width: 9.9, height: 5.2 },
    { kind: "ellipse", cx: 20.3, cy: 17.9, rx: 9.4, ry: 5.1 },
    { kind: "ellipse", cx: 48, cy: 35, rx: 6, ry: 6 },
    { kind: "polygon", points: [[2, 30], [20, 12.5], [33.7, 33], [25, 20.2], [12, 36]] },
    { kind: "polygon", points: [[5, 5], [40, 5], [5, 30], [40, 30]] }, // bow tie
  ];
  const lines: LineShape[] = [
    { kind: "line", x1: 0.5, y1: 0.5, x2: 49.5, y2: 36.5 },
    { kind: "line", x1: 10.5, y1: 30.5, x2: 45.5, y2: 2.5 },
    { kind: "line", x1: 45.5, y1: 10.5, x2: 60.5, y2: 10.5 },
  ];

  for (const plane of [0, 1, 9]) {
    it(`matches numpy's masks, statistics and line profiles on plane ${plane}`, () => {
      const r = spawnSync(PYTHON, [resolve(import.meta.dirname, "..", "fixtures", "regions_ref.py")], {
        input: JSON.stringify({ width: fx.width, height: fx.height, ceiling: 4095, planes: planesPath, plane, shapes, lines }),
        encoding: "utf8",
      });
      if (r.status !== 0) throw new Error(`regions_ref.py failed: ${r.stderr}`);
      const ref = JSON.parse(r.stdout) as { shapes: { indices: number[]; count: number; mean: number; sd: number; min: number; max: number; sum: number; atCeiling: number }[]; lines: (number | null)[][] };
      const img = fx.planes[plane];
      shapes.forEach((shape, k) => {
        const mask = regionMask(shape, fx.width, fx.height);
        expect(Array.from(mask), `${shape.kind} ${k}`).toEqual(ref.shapes[k].indices);
        expect(mask.length).toBeGreaterThan(0);
        const s = regionStats(img, mask, { ceiling: 4095 });
        const n = ref.shapes[k];
        expect(s.count).toBe(n.count);
        expect(s.sum).toBe(n.sum);
        expect(s.mean).toBeCloseTo(n.mean, 9);
        expect(s.sd).toBeCloseTo(n.sd, 9);
        expect([s.min, s.max, s.countAtCeiling]).toEqual([n.min, n.max, n.atCeiling]);
      });
      lines.forEach((line, k) => {
        const p = lineProfile(img, fx.width, fx.height, line).value.map((v) => (Number.isNaN(v) ? null : v));
        expect(p).toEqual(ref.lines[k]);
      });
    });
  }

  it("sees the saturated corner of plane 3 (channel 1, z 0, t 0) as pixels at the ceiling", () => {
    // make_tiffs.py sets data[0, 1, 0, :3, :7] = 4095: 21 pixels.
    const mask = regionMask({ kind: "rect", x: 0, y: 0, width: 7, height: 3 }, fx.width, fx.height);
    expect(regionStats(fx.planes[3], mask, { ceiling: 4095 }).countAtCeiling).toBe(21);
  });
});

// Editing by handles. The snapping rules are the drawing rules (corners on pixel edges, line ends on
// pixel centres); the expected numbers below are worked by hand.
describe("editing shapes by handles", () => {
  const rect = { kind: "rect", x: 2, y: 1, width: 10, height: 8 } as const;

  it("snaps corners to the nearest pixel edge and line ends to the pixel centre, inside the image", () => {
    expect(snapToEdge({ x: 3.4, y: 3.6 }, 10, 8)).toEqual({ x: 3, y: 4 });
    expect(snapToEdge({ x: -2, y: 99 }, 10, 8)).toEqual({ x: 0, y: 8 });
    expect(snapToCentre({ x: 3.9, y: 0.1 }, 10, 8)).toEqual({ x: 3.5, y: 0.5 });
    expect(snapToCentre({ x: 10, y: -1 }, 10, 8)).toEqual({ x: 9.5, y: 0.5 });
  });

  it("lists four corner handles for rectangles and ellipses, one per vertex, and two line ends", () => {
    expect(handlesOf(rect).map((h) => [h.key, h.x, h.y])).toEqual([["nw", 2, 1], ["ne", 12, 1], ["sw", 2, 9], ["se", 12, 9]]);
    expect(handlesOf({ kind: "ellipse", cx: 5, cy: 4, rx: 3, ry: 2 }).map((h) => [h.key, h.x, h.y])).toEqual([["nw", 2, 2], ["ne", 8, 2], ["sw", 2, 6], ["se", 8, 6]]);
    expect(handlesOf({ kind: "polygon", points: [[0, 0], [4, 0], [2, 3]] }).map((h) => h.key)).toEqual(["v0", "v1", "v2"]);
    expect(handlesOf({ kind: "line", x1: 0.5, y1: 0.5, x2: 4.5, y2: 2.5 }).map((h) => [h.key, h.x, h.y])).toEqual([["end1", 0.5, 0.5], ["end2", 4.5, 2.5]]);
  });

  it("resizes a rectangle by any corner, keeping the opposite corner fixed", () => {
    expect(resizeBox(rect, "se", { x: 15, y: 13 })).toEqual({ kind: "rect", x: 2, y: 1, width: 13, height: 12 });
    expect(resizeBox(rect, "nw", { x: 0, y: 0 })).toEqual({ kind: "rect", x: 0, y: 0, width: 12, height: 9 });
    expect(resizeBox(rect, "ne", { x: 5, y: 4 })).toEqual({ kind: "rect", x: 2, y: 4, width: 3, height: 5 });
    expect(resizeBox(rect, "sw", { x: 10, y: 2 })).toEqual({ kind: "rect", x: 10, y: 1, width: 2, height: 1 });
  });

  it("never lets width or height fall below 1 pixel, even when the corner is dragged past the opposite one", () => {
    expect(resizeBox(rect, "se", { x: -5, y: 0 })).toEqual({ kind: "rect", x: 2, y: 1, width: 1, height: 1 });
    expect(resizeBox(rect, "nw", { x: 12, y: 30 })).toEqual({ kind: "rect", x: 11, y: 8, width: 1, height: 1 });
    // The pixel mask of the smallest rectangle is exactly one pixel.
    expect(regionMask(resizeBox(rect, "se", { x: 2, y: 1 }), 20, 20).length).toBe(1);
  });

  it("resizes an ellipse through its bounding box (centre and semi-axes follow)", () => {
    const e = { kind: "ellipse", cx: 5, cy: 4, rx: 3, ry: 2 } as const;
    // Box 2…8 × 2…6; dragging se to (10, 10) gives box 2…10 × 2…10.
    expect(resizeBox(e, "se", { x: 10, y: 10 })).toEqual({ kind: "ellipse", cx: 6, cy: 6, rx: 4, ry: 4 });
    expect(resizeBox(e, "nw", { x: 9, y: 9 })).toEqual({ kind: "ellipse", cx: 7.5, cy: 5.5, rx: 0.5, ry: 0.5 });
  });

  it("moves one polygon vertex and leaves the others (and the original) alone", () => {
    const poly = { kind: "polygon", points: [[0, 0], [4, 0], [2, 3]] as [number, number][] } as const;
    const moved = moveVertex(poly, 2, { x: 2, y: 6 });
    expect(moved.points).toEqual([[0, 0], [4, 0], [2, 6]]);
    expect(poly.points[2]).toEqual([2, 3]);
    expect(moveVertex(poly, 7, { x: 1, y: 1 })).toBe(poly);
    // Triangle (0,0) (4,0) (2,3) → (2,6): twice the area (½ · 4 · 3 = 6 → 12), so it holds more pixels.
    expect(regionMask(moved, 10, 10).length).toBeGreaterThan(regionMask(poly, 10, 10).length);
  });

  it("moves a line end but refuses to put both ends on one point", () => {
    const line = { kind: "line", x1: 0.5, y1: 0.5, x2: 4.5, y2: 2.5 } as const;
    expect(moveLineEnd(line, 2, { x: 7.5, y: 0.5 })).toEqual({ kind: "line", x1: 0.5, y1: 0.5, x2: 7.5, y2: 0.5 });
    expect(moveLineEnd(line, 1, { x: 4.5, y: 2.5 })).toBe(line);
  });

  it("dragHandle snaps as drawing does before applying the handle", () => {
    expect(dragHandle(rect, { kind: "corner", corner: "se" }, { x: 15.3, y: 12.6 }, 32, 32)).toEqual({ kind: "rect", x: 2, y: 1, width: 13, height: 12 });
    // Clamped to the image edge (32 px wide).
    expect(dragHandle(rect, { kind: "corner", corner: "se" }, { x: 40, y: 9 }, 32, 32)).toEqual({ kind: "rect", x: 2, y: 1, width: 30, height: 8 });
    expect(dragHandle({ kind: "line", x1: 0.5, y1: 0.5, x2: 4.5, y2: 2.5 }, { kind: "end", end: 1 }, { x: 2.2, y: 9.9 }, 32, 32)).toEqual({ kind: "line", x1: 2.5, y1: 9.5, x2: 4.5, y2: 2.5 });
    expect(dragHandle({ kind: "polygon", points: [[0, 0], [4, 0], [2, 3]] }, { kind: "vertex", index: 0 }, { x: -3.7, y: 1.4 }, 32, 32)).toEqual({ kind: "polygon", points: [[0, 1], [4, 0], [2, 3]] });
    // A handle of the wrong kind changes nothing.
    expect(dragHandle(rect, { kind: "vertex", index: 0 }, { x: 5, y: 5 }, 32, 32)).toBe(rect);
  });
});
