import { writeFileSync } from "node:fs";
import { resolve } from "node:path";
import fc from "fast-check";
import { afterAll, describe, expect, test } from "vitest";
import {
  DARK_VARIANCE_FLOOR,
  fitPhotonTransfer,
  gainFromDnPerE,
  gainToDnPerE,
  pairStats,
  photoelectrons,
  PhotonTransferError,
  photonTransferFromFrames,
  seriesPairs,
  shotNoiseSnr,
  variancePeak,
} from "@/lib/imaging/photon-transfer";
import { createRandom } from "@/lib/imaging/random";
import { DEMO_CAMERA, exposeCamera, photonTransferFrames, saturationElectrons, type CameraModel } from "@/lib/imaging/synthetic";
import { PHOTON_TRANSFER_FRACTIONS } from "@/lib/server/demo/generate";
import { PYTHON, run, tempDir } from "../helpers/tiff-tools";

const series = (camera: CameraModel, fractions: readonly number[], seed: number, side = 256) =>
  [...photonTransferFrames({ width: side, height: side, levelsE: fractions.map((f) => f * saturationElectrons(camera)), camera, seed })];

// Levels as fractions of the electrons that fill the ADC: several on the linear part, then past saturation.
const FRACTIONS = [0.02, 0.05, 0.1, 0.2, 0.35, 0.5, 0.65, 0.8, 0.95, 1.1];

/** Invented cameras spanning the usual range: the demo sCMOS-like one, a 16-bit CCD-like one at 4 e⁻/DN, a high-gain 12-bit one. */
const CAMERAS: [string, CameraModel][] = [
  ["12-bit, K 0.5 DN/e⁻, offset 100 DN, σd 2.2 e⁻ (demo)", DEMO_CAMERA],
  ["16-bit, K 0.25 DN/e⁻ (4 e⁻/DN), offset 500 DN, σd 6 e⁻", { gainDnPerE: 0.25, offsetDn: 500, readNoiseE: 6, ceiling: 65535 }],
  ["12-bit, K 2 DN/e⁻, offset 60 DN, σd 1.2 e⁻", { gainDnPerE: 2, offsetDn: 60, readNoiseE: 1.2, ceiling: 4095 }],
];

describe("units", () => {
  test("converts a gain between DN per e⁻ (EMVA 1288's K) and e⁻ per DN (data sheets' inverse)", () => {
    expect(gainToDnPerE(0.5, "dn_per_e")).toBe(0.5);
    expect(gainToDnPerE(4, "e_per_dn")).toBe(0.25);
    expect(gainFromDnPerE(0.25, "e_per_dn")).toBe(4);
    expect(gainFromDnPerE(0.25, "dn_per_e")).toBe(0.25);
    fc.assert(
      fc.property(fc.double({ min: 1e-4, max: 1e4, noNaN: true }), fc.constantFrom("dn_per_e" as const, "e_per_dn" as const), (g, unit) => {
        expect(gainFromDnPerE(gainToDnPerE(g, unit), unit)).toBeCloseTo(g, 9);
      }),
    );
  });

  test.each([0, -1, Number.NaN, Number.POSITIVE_INFINITY])("refuses %s as a gain", (g) => {
    expect(() => gainToDnPerE(g, "dn_per_e")).toThrow(RangeError);
    expect(() => gainFromDnPerE(g, "e_per_dn")).toThrow(RangeError);
  });

  test("photoelectrons are (DN − offset) / K", () => {
    // 1100 DN on a camera with offset 100 DN and K = 0.5 DN/e⁻ is 2000 e⁻ (EMVA 1288: μy = μy.dark + K·μe).
    expect(photoelectrons(1100, 100, 0.5)).toBe(2000);
    expect(photoelectrons(100, 100, 0.5)).toBe(0);
    expect(photoelectrons(90, 100, 0.5)).toBe(-20);
  });

  test("shot-noise SNR is √N (Poisson statistics)", () => {
    expect(shotNoiseSnr(10_000)).toBe(100);
    expect(shotNoiseSnr(2)).toBeCloseTo(Math.SQRT2, 12);
    expect(shotNoiseSnr(0)).toBe(0);
    expect(shotNoiseSnr(-5)).toBe(0);
    // The √N law itself: the SD of Poisson counts with mean 400 is √400 = 20, so mean/SD ≈ 20.
    const random = createRandom(77);
    const counts = Array.from({ length: 40_000 }, () => random.poisson(400));
    const mean = counts.reduce((s, v) => s + v, 0) / counts.length;
    const sd = Math.sqrt(counts.reduce((s, v) => s + (v - mean) ** 2, 0) / counts.length);
    expect(mean / sd).toBeGreaterThan(shotNoiseSnr(400) * 0.98);
    expect(mean / sd).toBeLessThan(shotNoiseSnr(400) * 1.02);
  });
});

describe("pair statistics", () => {
  test("worked by hand: mean Σ(A+B)/2N and variance Σ((A−μA)−(B−μB))²/2N (EMVA 1288)", () => {
    // A = 1 2 3 4 (μA 2.5), B = 1 1 3 3 (μB 2): mean 18/8 = 2.25; (A−μA)−(B−μB) = −.5 .5 −.5 .5, Σ² = 1, /8 = 0.125.
    const s = pairStats(Uint16Array.of(1, 2, 3, 4), Uint16Array.of(1, 1, 3, 3));
    expect(s).toEqual({ pixels: 4, meanA: 2.5, meanB: 2, mean: 2.25, variance: 0.125 });
  });

  test("a fixed pattern common to both frames does not enter the variance", () => {
    const pattern = Uint16Array.from({ length: 1000 }, (_, i) => 100 + ((i * 37) % 500));
    const shifted = pattern.map((v, i) => v + (i % 2 ? 1 : -1));
    // Differences are ±2 everywhere with equal means: Σd²/2N = 4/2 = 2, whatever the pattern's own spread.
    expect(pairStats(shifted, shifted.map((v, i) => v + (i % 2 ? -2 : 2))).variance).toBe(2);
    expect(pairStats(pattern, pattern).variance).toBe(0);
  });

  test("refuses frames of different sizes or without pixels", () => {
    expect(() => pairStats(new Uint16Array(4), new Uint16Array(5))).toThrow(RangeError);
    expect(() => pairStats(new Uint16Array(0), new Uint16Array(0))).toThrow(RangeError);
  });
});

describe("the EMVA 1288 fit on synthetic frames with a known camera", () => {
  test.each(CAMERAS)("recovers %s", (_name, camera) => {
    const fit = photonTransferFromFrames(series(camera, FRACTIONS, 11));
    const sat = saturationElectrons(camera);
    // Tolerances: 256 × 256 pixels give each variance a relative SE of √(2/N) ≈ 0.55 %; 2 % on K and
    // 4 % on σd leave room for that and the 1 % PRNU the pair difference removes.
    expect(fit.gainDnPerE / camera.gainDnPerE).toBeGreaterThan(0.98);
    expect(fit.gainDnPerE / camera.gainDnPerE).toBeLessThan(1.02);
    expect(fit.gainEPerDn).toBeCloseTo(1 / fit.gainDnPerE, 12);
    expect(fit.readNoiseE / camera.readNoiseE).toBeGreaterThan(0.96);
    expect(fit.readNoiseE / camera.readNoiseE).toBeLessThan(1.04);
    expect(fit.readNoiseIsUpperLimit).toBe(false);
    expect(Math.abs(fit.offsetDn - camera.offsetDn)).toBeLessThan(0.1);
    // The variance peaks at the 0.95 level (the 1.1 level sits at the ceiling); the capacity is that
    // level's signal / K, so it lies within 10 % below the ADC limit (ceiling − offset) / K.
    expect(fit.saturation.reached).toBe(true);
    expect(fit.levels[fit.saturation.level].index).toBe(FRACTIONS.indexOf(0.95));
    expect(fit.saturation.capacityE / sat).toBeGreaterThan(0.9);
    expect(fit.saturation.capacityE / sat).toBeLessThan(1.0);
    expect(fit.maxSnr).toBeCloseTo(Math.sqrt(fit.saturation.capacityE), 12);
    // Fit range: levels up to 70 % of the saturation signal (0.02 … 0.65 of the ADC range).
    expect(fit.fit.levels).toBe(FRACTIONS.filter((f) => f <= 0.65).length);
    expect(fit.levels.filter((l) => l.inFit).map((l) => l.index)).toEqual([0, 1, 2, 3, 4, 5, 6]);
    expect(fit.fit.maxAbsRelativeResidual).toBeLessThan(0.02);
    expect(fit.fit.rSquared).toBeGreaterThan(0.999);
    expect(fit.gainStdErrorDnPerE).toBeGreaterThan(0);
    expect(fit.gainStdErrorDnPerE!).toBeLessThan(0.01 * fit.gainDnPerE);
    // Past saturation the variance collapses: the top level lies far below the line.
    expect(fit.levels.at(-1)!.relativeResidual).toBeLessThan(-0.9);
    expect(fit.warnings).toEqual([]);
  });

  test("the demo seed's photon-transfer series gives back the demo camera", () => {
    // The same frames lib/server/demo/generate.ts writes into demo-photon-transfer.tif (512 × 512, seed 505).
    const frames = [...photonTransferFrames({ width: 512, height: 512, levelsE: PHOTON_TRANSFER_FRACTIONS.map((f) => f * saturationElectrons(DEMO_CAMERA)), camera: DEMO_CAMERA, seed: 505 })];
    const fit = photonTransferFromFrames(frames);
    expect(fit.gainDnPerE / DEMO_CAMERA.gainDnPerE).toBeGreaterThan(0.99);
    expect(fit.gainDnPerE / DEMO_CAMERA.gainDnPerE).toBeLessThan(1.01);
    expect(fit.readNoiseE / DEMO_CAMERA.readNoiseE).toBeGreaterThan(0.98);
    expect(fit.readNoiseE / DEMO_CAMERA.readNoiseE).toBeLessThan(1.02);
    expect(fit.offsetDn).toBeCloseTo(DEMO_CAMERA.offsetDn, 1);
  });

  test("a series that stops before saturation says so and gives the capacity as a lower bound", () => {
    const fractions = [0.05, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6];
    const fit = photonTransferFromFrames(series(DEMO_CAMERA, fractions, 12));
    expect(fit.saturation.reached).toBe(false);
    expect(fit.saturation.level).toBe(fractions.length - 1);
    expect(fit.saturation.capacityE).toBeLessThan(saturationElectrons(DEMO_CAMERA));
    expect(fit.warnings.join(" ")).toMatch(/lower bound/);
    // The fit still runs up to 70 % of the brightest level and finds K.
    expect(fit.gainDnPerE / DEMO_CAMERA.gainDnPerE).toBeGreaterThan(0.97);
    expect(fit.gainDnPerE / DEMO_CAMERA.gainDnPerE).toBeLessThan(1.03);
  });

  test("when quantisation dominates the dark noise, the read noise is an upper limit", () => {
    // K = 0.05 DN/e⁻ (20 e⁻/DN) and σd = 2 e⁻: σy.dark² = 0.01 + 1/12 DN² < 0.24 DN².
    const camera: CameraModel = { gainDnPerE: 0.05, offsetDn: 20, readNoiseE: 2, ceiling: 4095 };
    const fit = photonTransferFromFrames(series(camera, FRACTIONS, 13, 128));
    expect(fit.dark.varianceDn2).toBeLessThan(DARK_VARIANCE_FLOOR);
    expect(fit.readNoiseIsUpperLimit).toBe(true);
    expect(fit.readNoiseE).toBeCloseTo(Math.sqrt(DARK_VARIANCE_FLOOR - 1 / 12) / fit.gainDnPerE, 9);
    expect(fit.readNoiseE).toBeGreaterThan(camera.readNoiseE);
    expect(fit.warnings.join(" ")).toMatch(/upper limit/);
  });

  test("levels given out of order are sorted by signal; the file's positions are kept", () => {
    const frames = series(DEMO_CAMERA, FRACTIONS, 14, 128);
    // Swap the pairs of levels 2 and 5 (pages 6, 7 and 12, 13).
    const swapped = [...frames];
    [swapped[6], swapped[7], swapped[12], swapped[13]] = [frames[12], frames[13], frames[6], frames[7]];
    const a = photonTransferFromFrames(frames);
    const b = photonTransferFromFrames(swapped);
    expect(b.gainDnPerE).toBe(a.gainDnPerE);
    expect(b.levels.map((l) => l.index)).toEqual([0, 1, 5, 3, 4, 2, 6, 7, 8, 9]);
    // Sorted position 2 is the file's level 5, whose pair now sits at pages 12 and 13.
    expect(b.levels[2].pages).toEqual([12, 13]);
  });
});

describe("saturation: where the variance peaks", () => {
  test.each([
    [[1, 2, 3, 4, 5, 6, 7, 3], 6],
    // One noisy pair on the linear part is not the peak: the walk from the top stops below the real one.
    [[1, 2, 9, 4, 5, 6, 7, 3], 6],
    [[1, 2, 3, 4], 3],
    [[5, 4, 3, 2], 0],
    // A dip of one level on the way down is walked over (the next level down is higher again).
    [[1, 2, 3, 8, 7.9, 8.1, 2], 5],
  ])("%j → %i", (variances, expected) => {
    expect(variancePeak(variances)).toBe(expected);
  });
});

describe("series that do not fit the method are refused with the reason", () => {
  const frames = series(DEMO_CAMERA, [0.1, 0.3, 0.5, 0.9, 1.1], 15, 64);

  test.each([
    [7, /even number of frames; this one has 7/],
    [6, /at least 3 flat pairs \(8 frames\); this one has 6 frames/],
    [1, /even number of frames/],
  ])("%i frames", (count, message) => {
    expect(() => seriesPairs(count)).toThrow(PhotonTransferError);
    expect(() => seriesPairs(count)).toThrow(message);
  });

  test("a series whose first pair is not the darkest", () => {
    const wrong = [frames[4], frames[5], frames[0], frames[1], ...frames.slice(6)];
    expect(() => photonTransferFromFrames(wrong)).toThrow(/Pages 2 and 3 .* are not brighter than the dark pair, pages 0 and 1/);
  });

  test("a pair whose two frames were taken at different exposures", () => {
    const wrong = [...frames];
    wrong[5] = frames[7];
    expect(() => photonTransferFromFrames(wrong)).toThrow(/Pages 4 and 5 differ in mean by .* the two frames of a pair must be taken at the same exposure/);
  });

  test("a series with fewer than 2 levels on the linear part", () => {
    const sparse = series(DEMO_CAMERA, [0.3, 0.9, 1.1, 1.2], 16, 64);
    expect(() => photonTransferFromFrames(sparse)).toThrow(/Only 1 flat level lies below 70 % of saturation/);
  });

  test("a series whose variance does not rise with the mean", () => {
    // Noise-free frames: every level has zero temporal variance.
    const flat = (v: number) => new Uint16Array(64).fill(v);
    expect(() => photonTransferFromFrames([flat(100), flat(100), flat(200), flat(200), flat(300), flat(300), flat(400), flat(400)])).toThrow(
      /does not rise with the mean/,
    );
  });

  test("fitPhotonTransfer needs a dark pair and 3 flat pairs", () => {
    const s = pairStats(frames[0], frames[1]);
    expect(() => fitPhotonTransfer([s, s, s])).toThrow(PhotonTransferError);
  });
});

describe("agrees with an independent numpy computation on the same frames", () => {
  const tmp = tempDir("photon-transfer");
  afterAll(() => tmp.remove());

  test.each([
    ["demo camera, 10 levels", DEMO_CAMERA, FRACTIONS, 21],
    ["16-bit camera, 7 levels", CAMERAS[1][1], [0.03, 0.15, 0.3, 0.45, 0.6, 0.9, 1.05], 22],
  ] as const)("%s", (_name, camera, fractions, seed) => {
    const side = 200;
    const frames = series(camera, fractions, seed, side);
    const bytes = Buffer.alloc(frames.length * side * side * 2);
    frames.forEach((f, k) => f.forEach((v, i) => bytes.writeUInt16LE(v, (k * side * side + i) * 2)));
    const path = tmp.path(`frames-${seed}.u16`);
    writeFileSync(path, bytes);
    const script = resolve(import.meta.dirname, "..", "fixtures", "photon_transfer.py");
    const py = JSON.parse(run(PYTHON, [script, path, String(frames.length), String(side), String(side)]));
    const fit = photonTransferFromFrames(frames);

    const pairs = seriesPairs(frames.length).map(([p, q]) => pairStats(frames[p], frames[q]));
    pairs.forEach((s, i) => {
      expect(s.mean).toBeCloseTo(py.means[i], 10);
      expect(s.variance).toBeCloseTo(py.variances[i], 9);
    });
    // numpy takes the plain maximum; on these series it is the same level as our walk from the top.
    expect(fit.saturation.level).toBe(py.peak);
    expect(fit.fit.levels).toBe(py.fitted);
    expect(fit.levels.map((l) => l.signalDn)).toEqual(py.signal.map((v: number) => expect.closeTo(v, 9)));
    expect(fit.levels.map((l) => l.varianceDn2)).toEqual(py.variance.map((v: number) => expect.closeTo(v, 8)));
    expect(fit.gainDnPerE).toBeCloseTo(py.gain, 12);
    expect(fit.readNoiseE).toBeCloseTo(py.readNoise, 9);
    expect(fit.saturation.capacityE).toBeCloseTo(py.capacity, 6);
    expect(fit.levels.map((l) => l.residualDn2)).toEqual(py.residuals.map((v: number) => expect.closeTo(v, 7)));
  });
});

describe("the camera model the fit assumes", () => {
  test("a dark frame's temporal variance is K²σd² + 1/12 DN² (EMVA 1288, σq² = 1/12 DN²)", () => {
    const camera: CameraModel = { gainDnPerE: 1.5, offsetDn: 200, readNoiseE: 3, ceiling: 4095 };
    const zero = new Float32Array(300 * 300);
    const random = createRandom(5);
    const s = pairStats(exposeCamera(zero, camera, random), exposeCamera(zero, camera, random));
    const expected = 1.5 ** 2 * 3 ** 2 + 1 / 12;
    expect(s.variance / expected).toBeGreaterThan(0.98);
    expect(s.variance / expected).toBeLessThan(1.02);
  });
});
