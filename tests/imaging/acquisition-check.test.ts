// The acquisition check's rules on numbers whose answers are known by construction. Sources: the
// ceiling rule and left-justification (FACTS.md, common practice); photoelectrons (DN − offset)/K with
// K in DN per electron (EMVA 1288 Release 4.0, 2021); shot noise SNR = √N (Poisson statistics).
import { describe, expect, it } from "vitest";
import { checkChannel, checkDataset, chooseCeiling, DEFAULT_THRESHOLDS, extrapolatedBrightest, formatRanges, type ChannelInput, type CheckInput } from "@/lib/imaging/acquisition-check";
import { rng as seeded } from "../helpers/rng";

const base: Omit<CheckInput, "channels"> = { storedCeiling: 4095, significantBits: null, containerBits: 16, detector: null };

/** A channel summarised the plain way (one loop over explicit pixel values), independent of the ingest code. */
function channelFrom(planes: { z: number; t: number; values: number[] }[], ceiling: number): ChannelInput {
  const all = planes.flatMap((p) => p.values).sort((a, b) => a - b);
  // Hyndman & Fan (1996) type 7, written out for the test.
  const q = (p: number) => {
    const h = (all.length - 1) * (p / 100);
    const lo = Math.floor(h);
    return all[lo] + (h - lo) * ((all[Math.min(lo + 1, all.length - 1)] ?? all[lo]) - all[lo]);
  };
  return {
    c: 0,
    name: "membrane",
    pixels: all.length,
    max: all[all.length - 1],
    countAtCeiling: all.filter((v) => v >= ceiling).length,
    countAtZero: all.filter((v) => v === 0).length,
    percentiles: Object.fromEntries(["0.01", "0.1", "1", "50", "99", "99.9", "99.99"].map((p) => [p, q(Number(p))])),
    planes: planes.map((p) => ({ z: p.z, t: p.t, pixels: p.values.length, countAtCeiling: p.values.filter((v) => v >= ceiling).length })),
  };
}

describe("formatRanges", () => {
  it("writes 1-based runs", () => {
    expect(formatRanges([11, 12, 13, 29, 12])).toBe("12–14, 30");
    expect(formatRanges([])).toBe("");
    expect(formatRanges([0])).toBe("1");
  });
});

describe("which ceiling applies", () => {
  it("takes SignificantBits first, then the detector profile, then left-justification, then the maximum", () => {
    const detector = { name: "Cam A", bitDepth: 14, offsetDn: 100, gainDnPerE: 0.5, readNoiseE: 1.5 };
    expect(chooseCeiling({ ...base, significantBits: 12, detector }, 100)).toEqual({ ceiling: 4095, from: "OME-XML SignificantBits = 12" });
    expect(chooseCeiling({ ...base, detector }, 100).ceiling).toBe(16383);
    expect(chooseCeiling(base, 65520, 12)).toEqual({ ceiling: 65520, from: "left-justified 12-bit data (every value a multiple of 16)" });
    expect(chooseCeiling(base, 1000).ceiling).toBe(1023);
    expect(chooseCeiling(base, 1024).ceiling).toBe(4095);
  });
});

describe("a saturated time course", () => {
  // 40 time points of 1000 pixels of 12-bit noise around 1500 DN (offset ~100); t 12–30 (0-based 11–29)
  // have 8 pixels each at the ceiling, 0.8 % of those planes.
  const rng = seeded(7);
  const planes = Array.from({ length: 40 }, (_, t) => ({
    z: 0,
    t,
    values: Array.from({ length: 1000 }, (_, i) => (t >= 11 && t <= 29 && i < 8 ? 4095 : 100 + Math.round(2800 * rng()))),
  }));
  const ch = channelFrom(planes, 4095);

  it("counts the saturated pixels, says where they are and gives the fraction", () => {
    const result = checkChannel({ ...base, channels: [ch] }, ch);
    expect(result.saturated.count).toBe(19 * 8);
    expect(result.saturated.fraction).toBeCloseTo(152 / 40_000, 12);
    expect(result.saturated.tRanges).toBe("12–30");
    expect(result.saturated.worstPlane?.fraction).toBeCloseTo(0.008, 12);
    expect(result.reasons[0]).toContain("at the 4095 ceiling in t 12–30");
  });

  it("calls it re-image with the default limits (0.38 % of the stack at the ceiling ≥ 0.1 %)", () => {
    expect(checkChannel({ ...base, channels: [ch] }, ch).verdict).toBe("re-image");
  });

  it("follows the lab's limits: with looser ones the same data are only a caution", () => {
    const thresholds = { ...DEFAULT_THRESHOLDS, saturatedReimage: 0.01, planeSaturatedReimage: 0.05 };
    expect(checkChannel({ ...base, thresholds, channels: [ch] }, ch).verdict).toBe("caution");
  });

  it("advises a shorter exposure by the extrapolated bright tail", () => {
    const result = checkChannel({ ...base, channels: [ch] }, ch);
    const brightest = extrapolatedBrightest(ch.percentiles, ch.percentiles["0.01"])!;
    const expected = Math.round(100 * (1 - (0.9 * (4095 - ch.percentiles["0.01"])) / (brightest - ch.percentiles["0.01"])));
    expect(result.advice[0]).toContain(`by about ${expected} %`);
    expect(expected).toBeGreaterThan(0);
  });
});

describe("zero clipping, range use and headroom", () => {
  it("flags a hidden dark level when many pixels sit at 0", () => {
    const values = Array.from({ length: 1000 }, (_, i) => (i < 60 ? 0 : 50 + (i % 200)));
    const ch = channelFrom([{ z: 0, t: 0, values }], 4095);
    const result = checkChannel({ ...base, channels: [ch] }, ch);
    expect(result.zero.fraction).toBeCloseTo(0.06, 12);
    expect(result.verdict).toBe("re-image");
    expect(result.reasons.join(" ")).toContain("dark level is hidden");
  });

  it("computes range use and headroom from the offset and the 99.99 % point (linear detector)", () => {
    const ch: ChannelInput = {
      c: 0, name: "nuclei", pixels: 1000, max: 1123, countAtCeiling: 0, countAtZero: 0,
      percentiles: { "0.01": 100, "0.1": 101, "1": 110, "50": 600, "99": 1000, "99.9": 1100, "99.99": 1123 }, planes: [],
    };
    const result = checkChannel({ ...base, channels: [ch] }, ch);
    expect(result.rangeUse).toBeCloseTo(1023 / 3995, 12);
    expect(result.headroom).toBeCloseTo(3995 / 1023, 12);
    expect(result.verdict).toBe("ready");
    const dim = { ...ch, percentiles: { ...ch.percentiles, "99.99": 300 } };
    const dimResult = checkChannel({ ...base, channels: [dim] }, dim);
    expect(dimResult.verdict).toBe("caution");
    expect(dimResult.advice[0]).toContain("19× longer"); // 3995 / 200 = 19.975, shown rounded down
  });

  it("with a detector profile: offset from the profile, levels in read-noise steps, photoelectrons and shot-noise SNR", () => {
    const detector = { name: "Cam A", bitDepth: 12, offsetDn: 100, gainDnPerE: 0.5, readNoiseE: 2 };
    const ch: ChannelInput = {
      c: 0, name: "nuclei", pixels: 1000, max: 1123, countAtCeiling: 0, countAtZero: 0,
      percentiles: { "0.01": 90, "99": 1000, "99.9": 1050, "99.99": 1100 }, planes: [],
    };
    const result = checkChannel({ ...base, detector, channels: [ch] }, ch);
    expect(result.offset).toEqual({ dn: 100, from: "detector profile" });
    expect(result.photoelectrons?.p9999).toBeCloseTo(2000, 12); // (1100 − 100) / 0.5
    expect(result.photoelectrons?.snr).toBeCloseTo(Math.sqrt(2000), 12);
    expect(result.effectiveLevels).toEqual({ count: 1000, bits: Math.log2(1000), unit: "read-noise steps" }); // 1000 DN / (2 e⁻ · 0.5 DN/e⁻)
  });

  it("says when the profile's ceiling does not fit the data instead of counting wrongly", () => {
    const detector = { name: "Cam 10-bit", bitDepth: 10, offsetDn: 0, gainDnPerE: 1, readNoiseE: null };
    const ch: ChannelInput = { c: 0, name: "x", pixels: 10, max: 3000, countAtCeiling: 0, countAtZero: 0, percentiles: { "0.01": 5, "99.99": 3000 }, planes: [] };
    const result = checkChannel({ ...base, detector, channels: [ch] }, ch);
    expect(result.ceilingCountExact).toBe(false);
    expect(result.notes[0]).toContain("lie above the 1023 ceiling");
  });
});

describe("a dataset's verdict", () => {
  it("is the worst channel's", () => {
    const ok: ChannelInput = { c: 0, name: "a", pixels: 10, max: 3000, countAtCeiling: 0, countAtZero: 0, percentiles: { "0.01": 100, "99.99": 3000 }, planes: [] };
    const bad: ChannelInput = { ...ok, c: 1, name: "b", countAtZero: 5 };
    expect(checkDataset({ ...base, channels: [ok, bad] })).toMatchObject({ verdict: "re-image", channels: [{ verdict: "ready" }, { verdict: "re-image" }] });
  });
});
