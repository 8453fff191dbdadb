import { quantile } from "d3-array";
import { describe, expect, test } from "vitest";
import { greyTable } from "@/lib/imaging/colour-tables";
import { fitRangeFloat, flatDarkCorrect, floatHistogram, floatPercentiles, mapFloatToRgba } from "@/lib/imaging/correction";
import { unpackRgba } from "@/lib/imaging/lut";
import { rng } from "../helpers/rng";


describe("flatDarkCorrect (Murphy & Davidson: (raw − dark)/(flat − dark) × mean(flat − dark))", () => {
  test("matches a hand-computed example and marks a dead flat pixel invalid", () => {
    const raw = Uint16Array.from([300, 500, 700, 150]);
    const flat = Uint16Array.from([1100, 2100, 3100, 100]);
    const dark = Uint16Array.from([100, 100, 100, 100]);
    const out = new Float32Array(4);
    const r = flatDarkCorrect(raw, flat, dark, out, { epsilon: 1 });
    // flat − dark = 1000, 2000, 3000, 0 → the last is ≤ ε: invalid; mean over valid = 2000.
    // (300−100)/1000·2000 = 400; (500−100)/2000·2000 = 400; (700−100)/3000·2000 = 400: an even field.
    expect(r).toEqual({ invalid: 1, scale: 2000 });
    expect([...out.subarray(0, 3)]).toEqual([400, 400, 400]);
    expect(out[3]).toBeNaN();
  });

  test("leaves an already even image at its own scale", () => {
    const raw = Uint16Array.from([110, 120, 130]);
    const out = new Float32Array(3);
    flatDarkCorrect(raw, new Float32Array([500, 500, 500]), new Float32Array([100, 100, 100]), out, { epsilon: 0 });
    expect([...out]).toEqual([10, 20, 30]);
  });

  test("does not touch the raw values", () => {
    const raw = Uint16Array.from([5, 6]);
    flatDarkCorrect(raw, Uint16Array.from([9, 9]), Uint16Array.from([1, 1]), new Float32Array(2), { epsilon: 0.5 });
    expect([...raw]).toEqual([5, 6]);
  });
});

describe("float percentiles and Fit on corrected values", () => {
  test("equal d3-array's type-7 quantile exactly, ignoring NaN (Hyndman & Fan 1996)", () => {
    const next = rng(5);
    for (let trial = 0; trial < 100; trial++) {
      const n = 1 + Math.floor(next() * 4000);
      const x = Float32Array.from({ length: n }, () => (next() < 0.02 ? NaN : Math.fround(1000 * next() ** 3 - 50)));
      const ps = [0, 0.1, 1, 50, 99.9, 100];
      const finite = [...x].filter((v) => !Number.isNaN(v));
      const ours = floatPercentiles(x, ps);
      // d3-array quantile skips NaN itself; with no finite values both are NaN / undefined.
      ps.forEach((p, i) => expect(ours[i], `n=${n} p=${p}`).toBe(finite.length ? quantile(finite, p / 100) : NaN));
    }
  });

  test("fitRangeFloat keeps white above black on a constant plane", () => {
    expect(fitRangeFloat(new Float32Array(10).fill(3.5))).toEqual({ black: 3.5, white: 4.5 });
  });

  test("floatHistogram counts every finite value once and reports NaN as invalid", () => {
    const h = floatHistogram(Float32Array.from([0, 0.5, 1, NaN, 2]), { bins: 4 });
    expect(h).toMatchObject({ min: 0, max: 2, binWidth: 0.5, valid: 4, invalid: 1 });
    expect([...h.counts]).toEqual([1, 1, 1, 1]);
  });

  test("mapFloatToRgba maps black to 0, white to 255 and paints invalid pixels", () => {
    const out = mapFloatToRgba(Float32Array.from([10, 20, 15, NaN]), { black: 10, white: 20 }, greyTable(), new Uint32Array(4), "#FF00FF");
    expect([...out].map((w) => unpackRgba(w)[0])).toEqual([0, 255, 128, 255]);
    expect(unpackRgba(out[3])).toEqual([255, 0, 255, 255]);
  });
});
