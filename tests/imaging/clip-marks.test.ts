import { describe, expect, test } from "vitest";
import { applyClipMarks, bottomPercentTo, chooseMarkColours, clipMarkRgbaLut, MARK_CANDIDATES, topPercentFrom } from "@/lib/imaging/clip-marks";
import { deltaE2000 } from "@/lib/imaging/colour-difference";
import { builtInTables, CHANNEL_COLOUR_SETS, findTable, greyTable, parseHex, singleHueTable } from "@/lib/imaging/colour-tables";
import { histogram16 } from "@/lib/imaging/histogram";
import { buildLut, buildRgbaLut, packRgba, unpackRgba } from "@/lib/imaging/lut";

describe("chooseMarkColours", () => {
  test("avoids the colours of the active table: on grey, no grey or white mark", () => {
    const choice = chooseMarkColours([greyTable()], []);
    expect(choice.high).not.toEqual([255, 255, 255]);
    expect(choice.highDistance).toBeGreaterThan(30);
  });

  test("picks the candidate farthest from the table and channel colours, by brute force over the candidates", () => {
    const table = findTable("viridis")!;
    const channels = ["#FF00FF"];
    const choice = chooseMarkColours([table], channels);
    const entries = Array.from({ length: 256 }, (_, i) => [table.rgb[3 * i], table.rgb[3 * i + 1], table.rgb[3 * i + 2]] as const);
    const score = (c: string) => Math.min(...[...entries, parseHex(channels[0])].map((e) => deltaE2000(c, e)));
    const best = Math.max(...MARK_CANDIDATES.map(score));
    expect(choice.highDistance).toBeCloseTo(best, 9);
    expect(score(MARK_CANDIDATES.find((c) => Math.abs(score(c) - best) < 1e-9)!)).toBeCloseTo(choice.highDistance, 9);
  });

  test("default high and low marks differ and stay away from each channel's ramp", () => {
    const tables = CHANNEL_COLOUR_SETS[3].map((c) => singleHueTable(c));
    const choice = chooseMarkColours(tables, CHANNEL_COLOUR_SETS[3]);
    expect(choice.low).not.toEqual(choice.high);
    expect(deltaE2000(choice.low, choice.high)).toBeGreaterThan(10);
    expect(choice.lowDistance).toBeGreaterThan(0);
  });

  test("for every built-in table alone, both marks are at least 10 ΔE00 from every entry (LOOK.md: visible whatever the mapping)", () => {
    for (const table of builtInTables) {
      const { highDistance, lowDistance } = chooseMarkColours([table], []);
      expect(highDistance, table.id).toBeGreaterThanOrEqual(10);
      expect(lowDistance, table.id).toBeGreaterThanOrEqual(10);
    }
  });
});

describe("percent thresholds", () => {
  const hist = histogram16(Uint16Array.from([1, 2, 2, 3, 3, 3, 4, 4, 4, 4]));

  test("mark whole values from the top while they fit in the percentage, never splitting equal values", () => {
    expect(topPercentFrom(hist, 40)).toBe(4); // the four 4s are exactly 40 %
    expect(topPercentFrom(hist, 60)).toBe(4); // adding the three 3s would be 70 %
    expect(topPercentFrom(hist, 5)).toBe(65536); // not even the top value fits: nothing marked
  });

  test("mark whole values from the bottom the same way", () => {
    expect(bottomPercentTo(hist, 30)).toBe(2);
    expect(bottomPercentTo(hist, 5)).toBe(-1);
  });
});

describe("applyClipMarks", () => {
  const ceiling = 4095;
  const pixels = Uint16Array.from([0, 90, 100, 101, 2000, 4094, 4095, 4095]);
  const mapped = () => Uint32Array.from(pixels, () => packRgba(10, 20, 30));

  test("paints pixels at the ceiling in the high colour and pixels at or below black in the low colour", () => {
    const out = mapped();
    const r = applyClipMarks(pixels, out, { ceiling, black: 100, highColour: "#FF0000", lowColour: "#0000FF", lowMode: "black" });
    expect(r).toMatchObject({ high: 2, low: 3, highFrom: 4095, lowTo: 100 });
    expect([...out].map((w) => unpackRgba(w).slice(0, 3).join(","))).toEqual(["0,0,255", "0,0,255", "0,0,255", "10,20,30", "10,20,30", "10,20,30", "255,0,0", "255,0,0"]);
  });

  test("can mark the highest and lowest percentages instead", () => {
    const out = mapped();
    // 8 pixels: top 40 % = 3.2 pixels → the two 4095s and the 4094 (3 pixels); bottom 25 % → 0 and 90.
    const r = applyClipMarks(pixels, out, { ceiling, black: 100, highColour: "#FF0000", lowColour: "#0000FF", lowMode: "percent", lowPercent: 25, highPercent: 40 });
    expect(r).toMatchObject({ high: 3, low: 2, highFrom: 4094, lowTo: 90 });
  });

  test("the rgbaLut fast path gives the same picture as marking after mapping", () => {
    const rgbaLut = buildRgbaLut(buildLut({ black: 100, white: 3000 }, ceiling), greyTable());
    const viaPixels = Uint32Array.from(pixels, (v) => rgbaLut[v]);
    const t = applyClipMarks(pixels, viaPixels, { ceiling, black: 100, highColour: "#FF0000", lowColour: "#0000FF", lowMode: "black" });
    const marked = clipMarkRgbaLut(rgbaLut, t, "#FF0000", "#0000FF");
    expect(Uint32Array.from(pixels, (v) => marked[v])).toEqual(viaPixels);
    expect(rgbaLut[4095]).toBe(packRgba(255, 255, 255)); // the original table is not modified
  });

  test("requires lowPercent in percent mode", () => {
    expect(() => applyClipMarks(pixels, mapped(), { ceiling, black: 0, highColour: "#FF0000", lowColour: "#0000FF", lowMode: "percent" })).toThrow(RangeError);
  });
});
