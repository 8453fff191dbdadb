import { describe, expect, test } from "vitest";
import { createRandom, logFactorial, logGamma, poissonKnuth, poissonPtrs, POISSON_PTRS_FROM } from "@/lib/imaging/random";
import {
  DEMO_CAMERA,
  DEMO_CHANNELS,
  exposeCamera,
  makeScene,
  photonTransferFrames,
  renderSignal,
  saturationElectrons,
  type CameraModel,
} from "@/lib/imaging/synthetic";

function meanVar(xs: ArrayLike<number>): { mean: number; variance: number } {
  let s = 0;
  for (let i = 0; i < xs.length; i++) s += xs[i];
  const mean = s / xs.length;
  let q = 0;
  for (let i = 0; i < xs.length; i++) q += (xs[i] - mean) ** 2;
  return { mean, variance: q / (xs.length - 1) };
}

/** Upper χ² quantile by Wilson & Hilferty (1931); z = 3.09 is the one-sided 0.1 % normal quantile. */
function chiSquareCritical(df: number, z = 3.09): number {
  const a = 2 / (9 * df);
  return df * (1 - a + z * Math.sqrt(a)) ** 3;
}

describe("Poisson sampler", () => {
  const N = 200_000;
  test.each([0.5, 3, 9.5, 10, 25, 300, 5000])("mean and variance both equal λ = %d within 5 standard errors", (lambda) => {
    const random = createRandom(Math.round(lambda * 1000) + 1);
    const xs = new Float64Array(N);
    for (let i = 0; i < N; i++) xs[i] = random.poisson(lambda);
    const { mean, variance } = meanVar(xs);
    // Poisson: E = Var = λ; SE of the mean √(λ/N), of the sample variance √((λ + 2λ²)/N) (μ₄ = λ + 3λ²; from memory).
    expect(Math.abs(mean - lambda)).toBeLessThan(5 * Math.sqrt(lambda / N));
    expect(Math.abs(variance - lambda)).toBeLessThan(5 * Math.sqrt((lambda + 2 * lambda * lambda) / N));
    expect(xs.every((x) => Number.isInteger(x) && x >= 0)).toBe(true);
  });

  test.each([
    ["Knuth", 3, poissonKnuth],
    ["Knuth", 9.9, poissonKnuth],
    ["PTRS", 10, poissonPtrs],
    ["PTRS", 25, poissonPtrs],
    ["PTRS", 400, poissonPtrs],
  ] as const)("%s at λ = %d matches the Poisson probabilities (χ² test, p = 0.001)", (_name, lambda, sampler) => {
    const random = createRandom(7 + lambda);
    const counts = new Map<number, number>();
    for (let i = 0; i < N; i++) {
      const k = sampler(lambda, random.uniform);
      counts.set(k, (counts.get(k) ?? 0) + 1);
    }
    // Bins with ≥ 5 expected counts (common practice for Pearson's χ²); the tails pooled into one bin.
    const pmf = (k: number) => Math.exp(-lambda + k * Math.log(lambda) - logFactorial(k));
    let chi = 0;
    let bins = 0;
    let pooledExpected = N;
    let pooledObserved = N;
    for (let k = 0; k < lambda * 3 + 50; k++) {
      const expected = N * pmf(k);
      if (expected < 5) continue;
      const observed = counts.get(k) ?? 0;
      chi += (observed - expected) ** 2 / expected;
      pooledExpected -= expected;
      pooledObserved -= observed;
      bins++;
    }
    chi += (pooledObserved - pooledExpected) ** 2 / pooledExpected;
    expect(bins).toBeGreaterThan(5);
    expect(chi).toBeLessThan(chiSquareCritical(bins));
  });

  test("switches from Knuth to PTRS at λ = 10, as numpy does (from memory)", () => {
    expect(POISSON_PTRS_FROM).toBe(10);
  });

  test("ln Γ agrees with ln k! summed directly and with Γ(½) = √π", () => {
    let lnFact = 0;
    for (let k = 1; k <= 200; k++) {
      lnFact += Math.log(k);
      expect(logGamma(k + 1)).toBeCloseTo(lnFact, 9);
    }
    expect(logFactorial(5000)).toBeCloseTo(logGamma(5001), 6);
    // Γ(1/2) = √π (Euler; any table of the gamma function).
    expect(logGamma(0.5)).toBeCloseTo(0.5 * Math.log(Math.PI), 12);
  });

  test("the same seed gives the same numbers; another seed does not", () => {
    const a = createRandom(42);
    const b = createRandom(42);
    const c = createRandom(43);
    const xs = Array.from({ length: 5 }, () => a.uniform());
    expect(Array.from({ length: 5 }, () => b.uniform())).toEqual(xs);
    expect(Array.from({ length: 5 }, () => c.uniform())).not.toEqual(xs);
  });
});

describe("camera model", () => {
  const camera: CameraModel = DEMO_CAMERA;
  const n = 256 * 256;

  test.each([0, 4, 50, 2000])("a flat exposure of %d e⁻ has EMVA 1288 mean and variance", (electrons) => {
    const out = exposeCamera(new Float32Array(n).fill(electrons), camera, createRandom(electrons + 11));
    const { mean, variance } = meanVar(out);
    const k = camera.gainDnPerE;
    // EMVA 1288 Release 3.1: μy = μy.dark + K·μe; σy² = K²σd² + σq² + K²μe with σq² = 1/12 DN².
    const expectedVar = k * k * camera.readNoiseE ** 2 + 1 / 12 + k * k * electrons;
    expect(Math.abs(mean - (camera.offsetDn + k * electrons))).toBeLessThan(5 * Math.sqrt(expectedVar / n));
    expect(variance / expectedVar).toBeGreaterThan(0.97);
    expect(variance / expectedVar).toBeLessThan(1.03);
  });

  test("clips at the 12-bit ceiling and never goes below 0", () => {
    const out = exposeCamera(Float32Array.from({ length: n }, (_, i) => (i % 2 ? 1e6 : 0)), { ...camera, offsetDn: 0 }, createRandom(3));
    expect(out.reduce((m, v) => Math.max(m, v), 0)).toBe(4095);
    expect(out.reduce((m, v) => Math.min(m, v), Infinity)).toBe(0);
    expect(out.filter((v, i) => i % 2 === 1 && v !== 4095)).toHaveLength(0);
  });

  test("flat pairs give back the gain and read noise by the EMVA 1288 mean–variance method", () => {
    const sat = saturationElectrons(camera);
    const fractions = [0.02, 0.1, 0.2, 0.35, 0.5, 0.65, 0.95, 1.2];
    const frames = [...photonTransferFrames({ width: 256, height: 256, levelsE: fractions.map((f) => f * sat), camera, seed: 9 })];
    expect(frames).toHaveLength(2 + 2 * fractions.length);
    // EMVA 1288: mean = Σ(A+B)/2N; temporal variance = Σ(A−B)²/2N (the difference cancels the PRNU).
    const pairs = Array.from({ length: frames.length / 2 }, (_, p) => {
      const [a, b] = [frames[2 * p], frames[2 * p + 1]];
      let s = 0;
      let d = 0;
      for (let i = 0; i < a.length; i++) {
        s += a[i] + b[i];
        d += (a[i] - b[i]) ** 2;
      }
      return { mean: s / (2 * a.length), variance: d / (2 * a.length) };
    });
    const [dark, ...flats] = pairs;
    // Fit through the origin on the linear part, up to 70 % of saturation (EMVA 1288 reference implementation).
    const linear = flats.filter((f) => f.mean - dark.mean <= 0.7 * (camera.ceiling - dark.mean));
    expect(linear).toHaveLength(6);
    let sxy = 0;
    let sxx = 0;
    for (const f of linear) {
      const x = f.mean - dark.mean;
      sxy += x * (f.variance - dark.variance);
      sxx += x * x;
    }
    const gain = sxy / sxx;
    expect(gain / camera.gainDnPerE).toBeGreaterThan(0.98);
    expect(gain / camera.gainDnPerE).toBeLessThan(1.02);
    // σd = √(σy.dark² − 1/12) / K (EMVA 1288).
    const readNoise = Math.sqrt(dark.variance - 1 / 12) / gain;
    expect(readNoise / camera.readNoiseE).toBeGreaterThan(0.97);
    expect(readNoise / camera.readNoiseE).toBeLessThan(1.03);
    expect(dark.mean).toBeCloseTo(camera.offsetDn, 1);
    // Saturation: the variance peaks below the top level, which sits at the ceiling with no variance left.
    const peak = flats.reduce((best, f, i) => (f.variance > flats[best].variance ? i : best), 0);
    expect(peak).toBeLessThan(flats.length - 1);
    expect(flats[flats.length - 1].mean).toBe(camera.ceiling);
    expect(flats[flats.length - 1].variance).toBe(0);
  });
});

describe("scene", () => {
  const scene = makeScene({ width: 128, height: 128, sizeZ: 7, sizeT: 10, channels: DEMO_CHANNELS, cellCount: 3, overBrightCells: 1, seed: 5 });

  function centroid(signal: Float32Array, background: Float32Array) {
    let s = 0;
    let sx = 0;
    let sy = 0;
    for (let i = 0; i < signal.length; i++) {
      const v = Math.max(0, signal[i] - background[i]);
      s += v;
      sx += v * (i % 128);
      sy += v * Math.floor(i / 128);
    }
    return { x: sx / s, y: sy / s, total: s };
  }

  test("cells are brightest near their focal slice and fade away from it", () => {
    const cell = scene.cells[1];
    const inFocus = Math.round(cell.focusZ);
    const peak = (z: number) => Math.max(...renderSignal(scene, 1, z, 0));
    expect(peak(inFocus)).toBeGreaterThan(peak(0));
    expect(peak(inFocus)).toBeGreaterThan(peak(6));
  });

  test("cells drift over time and their total signal changes", () => {
    const empty = makeScene({ width: 128, height: 128, sizeZ: 7, sizeT: 10, channels: DEMO_CHANNELS, cellCount: 0, overBrightCells: 0, seed: 5 });
    const bg = renderSignal(empty, 0, 3, 0);
    const first = centroid(renderSignal(scene, 0, 3, 0), bg);
    const last = centroid(renderSignal(scene, 0, 3, 9), bg);
    expect(Math.hypot(last.x - first.x, last.y - first.y)).toBeGreaterThan(0.1);
    // Some cells brighten by 30–80 % over the series (the invented scenario), so the total must change.
    expect(scene.cells.some((c) => c.brightening > 0)).toBe(true);
    expect(Math.abs(last.total - first.total) / first.total).toBeGreaterThan(0.05);
  });

  test("only the designated channel has over-bright cells that clip", () => {
    const clipped = DEMO_CHANNELS.map((_, c) => {
      const plane = exposeCamera(renderSignal(scene, c, 3, 0), DEMO_CAMERA, createRandom(c));
      return plane.filter((v) => v === DEMO_CAMERA.ceiling).length;
    });
    expect(DEMO_CHANNELS.map((ch) => ch.saturatedPeakE !== undefined)).toEqual([true, false, false]);
    expect(clipped[0]).toBeGreaterThan(0);
    expect(clipped.slice(1)).toEqual([0, 0]);
  });
});
