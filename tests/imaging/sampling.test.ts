import fc from "fast-check";
import { describe, expect, it } from "vitest";
import {
  abbeLimitUm,
  axialLimitUm,
  checkAxialSampling,
  checkSampling,
  nyquistPixelUm,
  NYQUIST_FACTOR_STRICT,
  pixelAtSampleUm,
  rayleighLimitUm,
  sig,
} from "@/lib/imaging/sampling";

describe("resolution limits", () => {
  it("gives about 0.2 µm for 550 nm at NA 1.4 (Abbe 0.196 µm, Rayleigh 0.240 µm)", () => {
    // Wu, Merchant & Castleman, Microscope Image Processing (2008), eq. 17.1: "with a central
    // wavelength of 550 nm and an NA of 1.4, the lateral resolving power is about 0.2 µm".
    expect(abbeLimitUm(550, 1.4)).toBeCloseTo(0.2, 1);
    // Abbe d = λ/(2NA) = 0.55/2.8 and Rayleigh d = 0.61λ/NA = 0.3355/1.4 (Murphy & Davidson,
    // Fundamentals of Light Microscopy and Electronic Imaging, 2nd ed., 2012; Wu et al. 2008).
    expect(abbeLimitUm(550, 1.4)).toBeCloseTo(0.19643, 5);
    expect(rayleighLimitUm(550, 1.4)).toBeCloseTo(0.23964, 5);
    expect(sig(abbeLimitUm(550, 1.4))).toBe("0.196");
    expect(sig(rayleighLimitUm(550, 1.4))).toBe("0.24");
  });

  it("puts the Nyquist pixel at half the Abbe limit (Pawley 2006, ch. 4), or Abbe/2.3 when asked (common practice)", () => {
    expect(nyquistPixelUm(550, 1.4)).toBeCloseTo(0.19643 / 2, 5);
    expect(nyquistPixelUm(550, 1.4, NYQUIST_FACTOR_STRICT)).toBeCloseTo(0.19643 / 2.3, 5);
  });

  it("scales with λ and 1/NA, and Rayleigh is always 1.22 × Abbe", () => {
    fc.assert(
      fc.property(fc.double({ min: 200, max: 2000, noNaN: true }), fc.double({ min: 0.01, max: 1.7, noNaN: true }), (wl, na) => {
        expect(rayleighLimitUm(wl, na) / abbeLimitUm(wl, na)).toBeCloseTo(1.22, 10);
        expect(abbeLimitUm(2 * wl, na)).toBeCloseTo(2 * abbeLimitUm(wl, na), 10);
        expect(abbeLimitUm(wl, na / 2)).toBeCloseTo(2 * abbeLimitUm(wl, na), 10);
      }),
    );
  });

  it("computes the approximate widefield axial limit 2λn/NA² (Inoué, in Pawley 2006, ch. 1)", () => {
    // 520 nm in oil (n 1.518) at NA 1.4: 2 · 0.52 · 1.518 / 1.96 = 0.80547 µm.
    expect(axialLimitUm(520, 1.4, 1.518)).toBeCloseTo(0.80547, 5);
  });

  it("divides the camera pixel pitch by the magnification (geometry)", () => {
    // 6.5 µm camera pixels behind a 60× objective: 0.108 µm at the sample.
    expect(pixelAtSampleUm(6.5, 60)).toBeCloseTo(0.10833, 5);
  });
});

describe("checkSampling", () => {
  it("calls a pixel of exactly the Nyquist size matched, even through float rounding", () => {
    const nyquist = nyquistPixelUm(550, 1.4);
    const check = checkSampling({ na: 1.4, wavelengthNm: 550, pixelUm: nyquist });
    expect(check.state).toBe("checked");
    if (check.state !== "checked") return;
    expect(check.verdict).toBe("matched");
    expect(check.ratio).toBeCloseTo(1, 12);
    expect(check.binning).toBeNull();
    expect(check.advice).toMatch(/^Meets Nyquist/);
  });

  it("advises 2×2 binning (75 % less storage) for pixels 2.5× finer than Nyquist", () => {
    const nyquist = nyquistPixelUm(520, 0.75);
    const check = checkSampling({ na: 0.75, wavelengthNm: 520, pixelUm: nyquist / 2.5 });
    if (check.state !== "checked") throw new Error(check.message);
    expect(check.verdict).toBe("over-sampled");
    expect(check.ratio).toBeCloseTo(0.4, 12);
    expect(check.binning).toBe(2);
    expect(check.storageCutPercent).toBeCloseTo(75, 10);
    expect(check.advice).toContain("Over-sampled 2.5×");
    expect(check.advice).toContain("Binning 2×2 would still meet Nyquist and cut storage by 75 %");
  });

  it("advises 3×3 binning (88.9 % less) at 3.4× over-sampling and the binned pixel still meets Nyquist", () => {
    const check = checkSampling({ na: 1.4, wavelengthNm: 600, pixelUm: nyquistPixelUm(600, 1.4) / 3.4 });
    if (check.state !== "checked") throw new Error(check.message);
    expect(check.binning).toBe(3);
    expect(check.storageCutPercent).toBeCloseTo((100 * 8) / 9, 10);
    expect(check.advice).toContain("88.9 %");
    // By construction, binning n×n multiplies the pixel by n; the result stays within Nyquist.
    expect(check.binning! * check.pixelUm).toBeLessThanOrEqual(check.nyquistPixelUm);
    expect((check.binning! + 1) * check.pixelUm).toBeGreaterThan(check.nyquistPixelUm);
  });

  it("says which detail is lost when under-sampled", () => {
    // A 20×/0.75 objective with 6.5 µm camera pixels: 0.325 µm pixels; Nyquist at 520 nm is 0.1733 µm.
    const pixelUm = pixelAtSampleUm(6.5, 20);
    const check = checkSampling({ na: 0.75, wavelengthNm: 520, pixelUm });
    if (check.state !== "checked") throw new Error(check.message);
    expect(check.verdict).toBe("under-sampled");
    expect(check.ratio).toBeCloseTo(0.325 / (0.52 / 1.5 / 2), 10);
    expect(check.detailLostBelowUm).toBeCloseTo(0.65, 10);
    expect(check.advice).toContain("record detail only down to about 0.65 µm");
    expect(check.advice).toContain("at most 0.173 µm");
  });

  it("with factor 2.3 the same pixel can turn from matched to under-sampled", () => {
    const pixelUm = nyquistPixelUm(550, 1.4) * 0.95;
    expect((checkSampling({ na: 1.4, wavelengthNm: 550, pixelUm }) as { verdict: string }).verdict).toBe("matched");
    expect((checkSampling({ na: 1.4, wavelengthNm: 550, pixelUm, factor: 2.3 }) as { verdict: string }).verdict).toBe("under-sampled");
  });

  it("names what it needs instead of computing NaN", () => {
    expect(checkSampling({})).toEqual({ state: "needs", missing: ["objective NA", "emission wavelength", "pixel size"], message: "Needs objective NA, emission wavelength and pixel size." });
    expect(checkSampling({ na: 1.4, wavelengthNm: null, pixelUm: 0.1 })).toEqual({ state: "needs", missing: ["emission wavelength"], message: "Needs emission wavelength." });
    // NaN is what parseFloat("") gives: treated as not given.
    expect(checkSampling({ na: Number.NaN, wavelengthNm: 520, pixelUm: 0.1 })).toMatchObject({ state: "needs", missing: ["objective NA"] });
  });

  it("refuses impossible values with a message", () => {
    for (const input of [{ na: 0 }, { na: -1 }, { na: 2 }, { wavelengthNm: 50 }, { pixelUm: 0 }, { pixelUm: Number.POSITIVE_INFINITY }]) {
      const check = checkSampling({ na: 1.4, wavelengthNm: 520, pixelUm: 0.1, ...input });
      expect(check.state, JSON.stringify(input)).toBe("invalid");
    }
    expect(checkSampling({ na: 1.8, wavelengthNm: 520, pixelUm: 0.1 })).toMatchObject({ state: "invalid", message: "The objective NA must be above 0 and at most 1.7." });
  });

  it("never returns a non-finite number for any valid input", () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0.01, max: 1.7, noNaN: true }),
        fc.double({ min: 200, max: 2000, noNaN: true }),
        fc.double({ min: 0.001, max: 100, noNaN: true }),
        (na, wavelengthNm, pixelUm) => {
          const check = checkSampling({ na, wavelengthNm, pixelUm });
          expect(check.state).toBe("checked");
          if (check.state !== "checked") return;
          for (const v of [check.abbeUm, check.rayleighUm, check.nyquistPixelUm, check.ratio]) expect(Number.isFinite(v)).toBe(true);
          expect(check.advice).not.toMatch(/NaN|Infinity/);
          // The verdict agrees with the ratio.
          if (check.ratio > 1 + 1e-9) expect(check.verdict).toBe("under-sampled");
          else expect(["matched", "over-sampled"]).toContain(check.verdict);
        },
      ),
    );
  });
});

describe("checkAxialSampling (approximate)", () => {
  it("compares the z step with half of 2λn/NA²", () => {
    // 0.8055 µm axial limit → 0.4027 µm Nyquist step; 0.2 µm steps are 2.01× finer: every 2nd slice would do.
    const over = checkAxialSampling({ na: 1.4, wavelengthNm: 520, refractiveIndex: 1.518, zStepUm: 0.2 });
    if (over.state !== "checked") throw new Error(over.message);
    expect(over.nyquistStepUm).toBeCloseTo(0.40273, 5);
    expect(over.verdict).toBe("over-sampled");
    expect(over.keepEvery).toBe(2);
    expect(over.storageCutPercent).toBeCloseTo(50, 10);
    const under = checkAxialSampling({ na: 1.4, wavelengthNm: 520, refractiveIndex: 1.518, zStepUm: 1 });
    expect(under).toMatchObject({ state: "checked", verdict: "under-sampled", detailLostBelowUm: 2 });
  });

  it("needs the refractive index and z step, and refuses an NA above the medium's index", () => {
    expect(checkAxialSampling({ na: 1.4, wavelengthNm: 520 })).toMatchObject({ state: "needs", missing: ["refractive index", "z step"] });
    expect(checkAxialSampling({ na: 1.4, wavelengthNm: 520, refractiveIndex: 1.33, zStepUm: 0.2 })).toMatchObject({ state: "invalid" });
  });
});

describe("the sampling check's query fields", () => {
  it("reads na, px, imm, nyq and one emission field per channel, and parses each with a message", async () => {
    const { samplingFieldsFrom, samplingQuery } = await import("@/lib/schemas/sampling");
    const fields = samplingFieldsFrom(new URLSearchParams("na=1.4&imm=oil&em1=605&em7=700"), 3);
    expect(fields).toEqual({ na: "1.4", px: "", imm: "oil", nyq: "2", em: ["", "605", ""] });
    expect(samplingQuery.parse(fields)).toEqual({ na: 1.4, px: undefined, imm: "oil", nyq: "2", em: [undefined, 605, undefined] });
    expect(samplingQuery.shape.na.safeParse("1,2").data).toBe(1.2);
    expect(samplingQuery.shape.na.safeParse("2").error?.issues[0].message).toBe("The objective NA must be 0.01–1.7.");
    expect(samplingQuery.shape.em.element.safeParse("green").error?.issues[0].message).toBe("The emission wavelength must be a number.");
    expect(samplingQuery.shape.imm.safeParse("honey").success).toBe(false);
  });
});
