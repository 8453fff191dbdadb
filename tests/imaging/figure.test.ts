import fc from "fast-check";
import { describe, expect, test } from "vitest";
import {
  approximateMeasure,
  buildFigureSidecar,
  disclosureText,
  figureFits,
  figureLayout,
  formatElapsed,
  formatLength,
  legendEntries,
  MIN_FIGURE_WIDTH,
  niceScaleBar,
  nonLinearMappings,
  timeStampText,
  upscaleNearest,
  wrapText,
  type FigureChannel,
  type Rect,
  type SidecarInput,
} from "@/lib/imaging/figure";
import { figureFileName, figureSidecar } from "@/lib/schemas/figure-sidecar";

describe("scale bar length", () => {
  // 10–20 % of the image width and lengths of 1, 2 or 5 × 10^k: common practice for micrographs.
  test.each([
    // µm per pixel, width px, scale → µm; the share of the width in the comment
    [0.1625, 50, 1, 1], // 8.125 µm wide: 1 µm is 12.3 %
    [0.1, 1024, 1, 20], // 102.4 µm: 20 µm is 19.5 % (10 µm would be 9.8 %)
    [1, 512, 1, 100], // 512 µm: 100 µm is 19.5 %
    [0.065, 2048, 1, 20], // 133 µm: 20 µm is 15.0 %
    [0.0325, 400, 1, 2], // 13 µm: 2 µm is 15.4 %
    [6.5, 2048, 1, 2000], // 13.3 mm: 2 mm is 15.0 %
    [0.001, 600, 1, 0.1], // 0.6 µm: 0.1 µm is 16.7 %
  ])("%f µm/px × %i px at %i× → %f µm", (umPerPixel, width, scale, um) => {
    const bar = niceScaleBar(umPerPixel, width, scale);
    expect(bar.um).toBe(um);
    expect(bar.fraction).toBeGreaterThanOrEqual(0.1);
    expect(bar.fraction).toBeLessThanOrEqual(0.2);
  });

  test("when no length falls in 10–20 %, the nearest on a log scale is used", () => {
    // 22 µm wide: 2 µm is 9.1 %, 5 µm is 22.7 %; ln(0.1414/0.0909) = 0.44 < ln(0.227/0.1414) = 0.47.
    expect(niceScaleBar(0.22, 100).um).toBe(2);
    // 24 µm wide: 2 µm is 8.3 %, 5 µm is 20.8 %: now 5 is nearer.
    expect(niceScaleBar(0.24, 100).um).toBe(5);
  });

  test("the output scale changes the bar's pixels, not its length", () => {
    const one = niceScaleBar(0.1625, 50, 1);
    const two = niceScaleBar(0.1625, 50, 2);
    expect(two.um).toBe(one.um);
    expect(one.px).toBeCloseTo(1 / 0.1625, 10);
    expect(two.px).toBeCloseTo(2 / 0.1625, 10);
  });

  test("picks a 1-2-5 length inside 10–20 % whenever one exists (checked against every candidate)", () => {
    fc.assert(
      fc.property(fc.double({ min: 1e-3, max: 1e3, noNaN: true }), fc.integer({ min: 16, max: 20_000 }), (umPerPixel, width) => {
        const bar = niceScaleBar(umPerPixel, width);
        const widthUm = umPerPixel * width;
        const mantissa = bar.um / 10 ** Math.floor(Math.log10(bar.um) + 1e-9);
        expect([1, 2, 5].some((m) => Math.abs(mantissa - m) < 1e-9)).toBe(true);
        const inside: number[] = [];
        for (let k = -6; k <= 6; k++) for (const m of [1, 2, 5]) if (m * 10 ** k >= 0.1 * widthUm && m * 10 ** k <= 0.2 * widthUm) inside.push(m * 10 ** k);
        if (inside.length) {
          expect(bar.fraction).toBeGreaterThanOrEqual(0.1 - 1e-9);
          expect(bar.fraction).toBeLessThanOrEqual(0.2 + 1e-9);
        } else {
          // Neighbouring candidates are at most 2.5× apart, so the nearest is within 8–25 %.
          expect(bar.fraction).toBeGreaterThan(0.08);
          expect(bar.fraction).toBeLessThan(0.25);
        }
      }),
    );
  });

  test("refuses a missing pixel size", () => {
    expect(() => niceScaleBar(0, 100)).toThrow(RangeError);
    expect(() => niceScaleBar(Number.NaN, 100)).toThrow(RangeError);
  });

  test("labels lengths in µm, and from 1000 µm in mm", () => {
    expect(formatLength(1)).toBe("1 µm");
    expect(formatLength(0.5)).toBe("0.5 µm");
    expect(formatLength(200)).toBe("200 µm");
    expect(formatLength(2000)).toBe("2 mm");
  });
});

describe("time stamp", () => {
  test("hh:mm:ss with tenths when needed", () => {
    expect(formatElapsed(0)).toBe("00:00:00");
    expect(formatElapsed(1.5)).toBe("00:00:01.5");
    expect(formatElapsed(61)).toBe("00:01:01");
    expect(formatElapsed(3600 + 59.9)).toBe("01:00:59.9");
    expect(timeStampText(1, 2, 1.5)).toBe("t = 00:00:01.5 (time point 2 of 2)");
  });
});

const nuclei: FigureChannel = { c: 0, name: "nuclei", colour: "#ff00ff", tableId: null, black: 150, white: 900, gamma: 1, visible: true };
const membrane: FigureChannel = { c: 1, name: "membrane", colour: "#00ff00", tableId: null, black: 0, white: 4095, gamma: 1, visible: true };

describe("legend", () => {
  test("lists drawn channels with colour, black and white points in raw counts, gamma only when not 1", () => {
    const entries = legendEntries([nuclei, { ...membrane, gamma: 0.8 }, { ...membrane, c: 2, name: "hidden", visible: false }]);
    expect(entries.map((e) => e.name)).toEqual(["nuclei", "membrane"]);
    expect(entries[0].text).toBe("nuclei: black to #FF00FF · black 150 DN · white 900 DN");
    expect(entries[1].text).toBe("membrane: black to #00FF00 · black 0 DN · white 4095 DN · gamma 0.8 (non-linear)");
  });

  test("names a colour table and says when the points are corrected values", () => {
    const [entry] = legendEntries([{ ...nuclei, tableId: "viridis", black: 12.5 }], { corrected: true });
    expect(entry.text).toBe("nuclei: colour table Viridis (blue–green–yellow) · black 12.5 corrected DN · white 900 corrected DN");
    // The swatch colour of a table is its last entry (viridis ends at #FDE725, Smith & van der Walt 2015).
    expect(entry.colour).toBe("#FDE725");
  });
});

describe("disclosure", () => {
  test("says display mapping, not the data, and that all mappings are linear", () => {
    const text = disclosureText({ channels: [nuclei, membrane], blend: "add", cvd: null, correction: false, clipMarks: null });
    expect(text).toMatch(/^Display mapping, not the data:/);
    expect(text).toContain("All mappings linear.");
    expect(text).not.toContain("Non-linear");
  });

  test("names a gamma other than 1, the colour-vision preview and the correction (Rossner & Yamada 2004: disclose non-linear adjustments)", () => {
    const channels = [nuclei, { ...membrane, gamma: 0.8 }];
    const text = disclosureText({ channels, blend: "max", cvd: "deuteranopia", correction: true, clipMarks: { high: "#00ffff", low: "#0000ff" } });
    expect(text).toContain("Non-linear: gamma 0.8 on membrane; colour-vision preview (deuteranopia simulation); flat/dark correction (display only).");
    expect(text).toContain("combined by maximum");
    expect(text).toContain("Clipping marks painted: #00FFFF at the ceiling, #0000FF at or below black.");
    expect(text).not.toContain("All mappings linear");
  });

  test("a hidden channel's gamma is not drawn, so it is not named", () => {
    expect(nonLinearMappings({ channels: [nuclei, { ...membrane, gamma: 2, visible: false }], cvd: null, correction: false })).toEqual([]);
  });
});

const overlaps = (a: Rect, b: Rect) => a.x < b.x + b.width && b.x < a.x + a.width && a.y < b.y + b.height && b.y < a.y + a.height;

describe("figure layout", () => {
  const input = {
    imageWidth: 1024,
    imageHeight: 768,
    scale: 1,
    scaleBar: { px: 123, label: "20 µm" },
    timeStamp: "t = 00:00:01.5 (time point 2 of 2)",
    legend: ["nuclei: black to #FF00FF · black 150 DN · white 900 DN", "membrane: black to #00FF00 · black 0 DN · white 4095 DN · gamma 0.8 (non-linear)"],
    lines: [disclosureText({ channels: [nuclei, membrane], blend: "add", cvd: null, correction: false, clipMarks: null }), "Bench stack · z 2/3 · t 2/2"],
  };

  test("puts the image at the top, pixel for pixel, and everything else below it", () => {
    const layout = figureLayout(input);
    expect(layout.image).toEqual({ x: 0, y: 0, width: 1024, height: 768 });
    expect(layout.width).toBe(1024);
    expect(layout.height).toBeGreaterThan(768 + 4 * layout.lineHeight);
    const items: Rect[] = [
      layout.scaleBar!.bar,
      ...layout.legend.map((l) => l.swatch),
      ...[layout.timeStamp!, layout.scaleBar!.label, ...layout.legend.flatMap((l) => l.text), ...layout.text].map((t) => ({ x: t.x, y: t.y, width: approximateMeasure(t.text, layout.fontPx), height: layout.fontPx })),
    ];
    for (const item of items) {
      expect(overlaps(item, layout.image), JSON.stringify(item)).toBe(false);
      expect(item.x).toBeGreaterThanOrEqual(0);
      expect(item.x + item.width).toBeLessThanOrEqual(layout.width + 1e-9);
      expect(item.y + item.height).toBeLessThanOrEqual(layout.height);
    }
    // The scale bar ends under the image's right edge, one padding in.
    expect(layout.scaleBar!.bar.x + layout.scaleBar!.bar.width).toBe(1024 - layout.padding);
    expect(layout.scaleBar!.bar.width).toBe(123);
  });

  test("doubles the image area at 2× and keeps the text size tied to the figure width", () => {
    const one = figureLayout(input);
    const two = figureLayout({ ...input, scale: 2 });
    expect(two.image).toEqual({ x: 0, y: 0, width: 2048, height: 1536 });
    expect(two.fontPx).toBeGreaterThan(one.fontPx);
    expect(one.fontPx).toBe(Math.round(1024 / 40));
  });

  test("a small image gets side margins so the text has room; the image stays on whole pixels", () => {
    const layout = figureLayout({ ...input, imageWidth: 50, imageHeight: 37 });
    expect(layout.width).toBe(MIN_FIGURE_WIDTH);
    expect(layout.image).toEqual({ x: Math.floor((MIN_FIGURE_WIDTH - 50) / 2), y: 0, width: 50, height: 37 });
    expect(layout.fontPx).toBe(12);
    for (const t of layout.text) expect(t.x + approximateMeasure(t.text, 12)).toBeLessThanOrEqual(layout.width - layout.padding + 1e-9);
  });

  test("under a narrow image the time stamp moves to its own row instead of running into the scale bar", () => {
    const layout = figureLayout({ ...input, imageWidth: 50, imageHeight: 37, scaleBar: { px: 6, label: "1 µm" } });
    const stamp = layout.timeStamp!;
    const stampBox = { x: stamp.x, y: stamp.y, width: approximateMeasure(stamp.text, layout.fontPx), height: layout.fontPx };
    const label = layout.scaleBar!.label;
    expect(overlaps(stampBox, layout.scaleBar!.bar)).toBe(false);
    expect(overlaps(stampBox, { x: label.x, y: label.y, width: approximateMeasure(label.text, layout.fontPx), height: layout.fontPx })).toBe(false);
    expect(stamp.y).toBeGreaterThan(label.y);
    expect(layout.legend[0].swatch.y).toBeGreaterThan(stamp.y + layout.fontPx);
    // With room beside the bar (a wide image) they share one row.
    const wide = figureLayout(input);
    expect(wide.timeStamp!.y).toBe(wide.scaleBar!.bar.y);
  });

  test("without scale bar, time stamp and legend only the footer lines remain", () => {
    const layout = figureLayout({ ...input, scaleBar: null, timeStamp: null, legend: [] });
    expect(layout.scaleBar).toBeNull();
    expect(layout.timeStamp).toBeNull();
    expect(layout.legend).toEqual([]);
    expect(layout.text[0].text.startsWith("Display mapping, not the data:")).toBe(true);
    expect(layout.height).toBeLessThan(figureLayout(input).height);
  });

  test("wraps words to the width and cuts a word that is wider than a line", () => {
    expect(wrapText("aaa bbb ccc", 7 * 10, 10, (s, px) => s.length * px)).toEqual(["aaa bbb", "ccc"]);
    expect(wrapText("abcdefghij", 40, 10, (s, px) => s.length * px)).toEqual(["abcd", "efgh", "ij"]);
  });

  test("refuses a fractional scale and flags figures too big for the browser", () => {
    expect(() => figureLayout({ ...input, scale: 1.5 })).toThrow(RangeError);
    expect(figureFits(2048, 2048, 2)).toBe(true);
    expect(figureFits(2048, 2048, 4)).toBe(false);
  });
});

describe("nearest-neighbour upscaling", () => {
  test("each pixel becomes k × k copies of itself (checked against a plain loop)", () => {
    const w = 5;
    const h = 3;
    const src = new Uint8ClampedArray(w * h * 4).map((_, i) => (i * 37 + 11) % 256);
    for (const k of [1, 2, 3, 4]) {
      const out = upscaleNearest(src, w, h, k);
      expect(out.length).toBe(w * k * h * k * 4);
      for (let y = 0; y < h * k; y++) {
        for (let x = 0; x < w * k; x++) {
          const o = (y * w * k + x) * 4;
          const s = (Math.floor(y / k) * w + Math.floor(x / k)) * 4;
          expect([...out.subarray(o, o + 4)]).toEqual([...src.subarray(s, s + 4)]);
        }
      }
    }
  });

  test("refuses a size that does not match the bytes", () => {
    expect(() => upscaleNearest(new Uint8ClampedArray(12), 2, 2, 2)).toThrow(RangeError);
  });
});

describe("sidecar", () => {
  const base: SidecarInput = {
    dataset: { id: 7, title: "Bench stack", sha256: "A".repeat(64), width: 50, height: 37, sizeC: 2, sizeZ: 3, sizeT: 2, ceiling: 4095, physicalSizeX: 0.1625, timeIncrement: 1.5 },
    z: 1,
    t: 1,
    channels: [nuclei, { ...membrane, gamma: 0.8 }],
    blend: "add",
    clipMarks: null,
    cvd: null,
    correction: null,
    scale: 2,
    scaleBar: { um: 1, px: 2 / 0.1625 },
    timeStamp: "t = 00:00:01.5 (time point 2 of 2)",
    legend: true,
    background: "white",
    layout: { width: 480, height: 200, image: { x: 190, y: 0, width: 100, height: 74 } },
    exportedAt: new Date("2026-12-01T10:00:00Z"),
    appVersion: "0.1.0",
  };

  test("carries the dataset checksum, the plane, every mapping and the disclosure, and validates", () => {
    const s = buildFigureSidecar(base);
    expect(figureSidecar.safeParse(JSON.parse(JSON.stringify(s))).success).toBe(true);
    expect(s.format).toBe("fluxframe-figure");
    expect(s.version).toBe(1);
    expect(s.dataset.sha256).toBe("a".repeat(64));
    expect(s.plane).toEqual({ z: 1, t: 1, c: [0, 1] });
    expect(s.channels[1]).toEqual({ c: 1, name: "membrane", colour: "#00ff00", tableId: null, black: 0, white: 4095, gamma: 0.8, visible: true });
    expect(s.nonLinear).toEqual(["gamma 0.8 on membrane"]);
    expect(s.disclosure).toContain("Non-linear: gamma 0.8 on membrane");
    expect(s.output.scale).toBe(2);
    expect(s.exportedAt).toBe("2026-12-01T10:00:00.000Z");
  });

  test("lists only the drawn channels in the plane, but keeps every mapping", () => {
    const s = buildFigureSidecar({ ...base, channels: [nuclei, { ...membrane, visible: false }] });
    expect(s.plane.c).toEqual([0]);
    expect(s.channels).toHaveLength(2);
  });

  test("refuses what a reader could not reproduce from", () => {
    const good = JSON.parse(JSON.stringify(buildFigureSidecar(base)));
    const bad = (patch: (s: any) => void) => {
      const copy = structuredClone(good);
      patch(copy);
      return figureSidecar.safeParse(copy).success;
    };
    expect(bad(() => undefined)).toBe(true);
    expect(bad((s) => (s.version = 2))).toBe(false);
    expect(bad((s) => (s.format = "other"))).toBe(false);
    expect(bad((s) => (s.dataset.sha256 = "abc"))).toBe(false);
    expect(bad((s) => (s.plane.z = 3))).toBe(false);
    expect(bad((s) => (s.plane.c = [5]))).toBe(false);
    expect(bad((s) => (s.channels[0].white = 150))).toBe(false);
    expect(bad((s) => (s.output.image.width = 99))).toBe(false);
    expect(bad((s) => (s.output.image.x = 400))).toBe(false);
    expect(bad((s) => (s.extra = true))).toBe(false);
    expect(() => buildFigureSidecar({ ...base, z: 3 })).toThrow();
  });

  test("file names: no folders or reserved characters", () => {
    expect(figureFileName.parse("  Bench stack z2 t2 ")).toBe("Bench stack z2 t2");
    for (const name of ["", "a/b", "a\\b", "..", "x:y", "a\u0007b"]) expect(figureFileName.safeParse(name).success, name).toBe(false);
  });
});
