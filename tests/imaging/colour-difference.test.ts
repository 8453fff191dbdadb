import { readFileSync } from "node:fs";
import { resolve } from "node:path";
import { describe, expect, test } from "vitest";
import { CVD_WARNING_THRESHOLD, deltaE2000, deltaE2000Lab, minPairDistance, srgbToLab } from "@/lib/imaging/colour-difference";

const ref = (name: string) => JSON.parse(readFileSync(resolve(import.meta.dirname, "../../../shared/reference", name), "utf8"));
const sharma = ref("ciede2000_sharma2005.json") as { pairs: { pair: number; L1: number; a1: number; b1: number; L2: number; a2: number; b2: number; dE00: number }[] };
const srgb = ref("srgb_constants.json");

describe("CIEDE2000", () => {
  test("passes all 34 pairs of Sharma, Wu & Dalal (2005), Table 1, to 1e-4, in both argument orders", () => {
    expect(sharma.pairs.length).toBe(34);
    for (const p of sharma.pairs) {
      const a = { l: p.L1, a: p.a1, b: p.b1 };
      const b = { l: p.L2, a: p.a2, b: p.b2 };
      expect(Math.abs(deltaE2000Lab(a, b) - p.dE00), `pair ${p.pair}`).toBeLessThanOrEqual(1e-4);
      expect(Math.abs(deltaE2000Lab(b, a) - p.dE00), `pair ${p.pair} swapped`).toBeLessThanOrEqual(1e-4);
    }
  });

  test("converts sRGB to Lab relative to D65 (CSS Color 4 / IEC 61966-2-1 worked examples in the reference JSON)", () => {
    for (const row of srgb.worked_examples_derived.rows as { srgb: string; lab_D65_own: number[]; culori_lab_D50: number[] }[]) {
      const lab = srgbToLab(row.srgb);
      [lab.l, lab.a, lab.b].forEach((x, k) => expect(x, `${row.srgb}[${k}]`).toBeCloseTo(row.lab_D65_own[k], 3));
    }
    // And not D50: #FF0000 has L = 54.29 at D50, 53.24 at D65.
    expect(srgbToLab("#FF0000").l).toBeCloseTo(53.2371, 3);
  });

  test("is zero for equal colours and symmetric for sRGB colours", () => {
    expect(deltaE2000("#56B4E9", "#56B4E9")).toBe(0);
    expect(deltaE2000("#E69F00", "#009E73")).toBeCloseTo(deltaE2000("#009E73", "#E69F00"), 9);
  });
});

describe("minPairDistance", () => {
  test("finds the closest pair and the vision under which it is closest", () => {
    // Green and yellow: far apart for normal vision, close under protanopia (Machado et al. 2009).
    const d = minPairDistance(["#FF00FF", "#00FF00", "#FFFF00"]);
    expect(d.pair).toEqual([1, 2]);
    expect(d.vision).toBe("protanopia");
    expect(d.byVision.normal!).toBeGreaterThan(CVD_WARNING_THRESHOLD);
    expect(d.distance).toBeLessThan(CVD_WARNING_THRESHOLD);
  });

  test("checks normal vision only when simulation is off", () => {
    const d = minPairDistance(["#00FF00", "#FFFF00"], { simulate: false });
    expect(Object.keys(d.byVision)).toEqual(["normal"]);
    expect(d.distance).toBeGreaterThan(CVD_WARNING_THRESHOLD);
  });

  test("keeps magenta/green above the threshold under every simulation (Wong 2011)", () => {
    expect(minPairDistance(["#FF00FF", "#00FF00"]).distance).toBeGreaterThan(CVD_WARNING_THRESHOLD);
  });

  test("flags red/green under deuteranopia only when lightness is ignored (documented caveat of the threshold)", () => {
    // Standard ΔE00 keeps ~19.5 from the lightness difference; hue and chroma alone give ~2.7.
    expect(minPairDistance(["#FF0000", "#00FF00"], { simulate: ["deuteranopia"] }).distance).toBeGreaterThan(CVD_WARNING_THRESHOLD);
    const chroma = minPairDistance(["#FF0000", "#00FF00"], { simulate: ["deuteranopia"], lightness: "ignore" });
    expect(chroma.distance).toBeLessThan(CVD_WARNING_THRESHOLD);
    expect(chroma.vision).toBe("deuteranopia");
  });

  test("is Infinity with fewer than two colours", () => {
    expect(minPairDistance(["#FFFFFF"]).distance).toBe(Infinity);
  });
});
