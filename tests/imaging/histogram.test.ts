import { afterAll, beforeAll, describe, expect, it, test } from "vitest";
import { countAt, histogram16, mergeHistograms, statsFromHistogram } from "@/lib/imaging/histogram";
import { loadStackFixture, type StackFixture } from "./stack-fixture";

describe("histogram16", () => {
  test("counts each raw value exactly", () => {
    const h = histogram16(new Uint16Array([0, 3, 3, 65535, 3, 0]));
    expect(h).toHaveLength(65536);
    expect([h[0], h[1], h[3], h[65535]]).toEqual([2, 0, 3, 1]);
  });

  test("accepts 8-bit planes", () => {
    const h = histogram16(new Uint8Array([255, 255, 1]), 256);
    expect([h[1], h[255]]).toEqual([1, 2]);
  });

  test("refuses a value beyond the last bin instead of dropping it", () => {
    expect(() => histogram16(new Uint16Array([1, 4096]), 4096)).toThrow(/Pixel 1 has value 4096, beyond the last of 4096 bins/);
  });
});

describe("statsFromHistogram against numpy on the seeded 12-bit stack", () => {
  let fx: StackFixture;
  beforeAll(() => {
    fx = loadStackFixture();
  });
  afterAll(() => fx.remove());

  test("matches numpy min, max, mean and population SD (numpy.std, ddof=0) for every plane", () => {
    fx.planes.forEach((plane, i) => {
      const s = statsFromHistogram(histogram16(plane), 4095);
      const r = fx.ref.planes[i];
      expect([s.count, s.min, s.max, s.countAtZero, s.countAtCeiling]).toEqual([r.count, r.min, r.max, r.countAtZero, r.countAt4095]);
      expect(s.mean).toBeCloseTo(r.mean, 9);
      expect(s.sd).toBeCloseTo(r.sd, 9);
    });
  });

  test("merged plane histograms give numpy's statistics of the whole stack", () => {
    const merged = mergeHistograms(fx.planes.map((p) => histogram16(p)));
    const s = statsFromHistogram(merged, 4095);
    const r = fx.ref.all;
    expect([s.count, s.min, s.max, s.countAtZero, s.countAtCeiling]).toEqual([r.count, r.min, r.max, r.countAtZero, r.countAt4095]);
    expect(s.mean).toBeCloseTo(r.mean, 9);
    expect(s.sd).toBeCloseTo(r.sd, 9);
  });
});

describe("mergeHistograms and countAt", () => {
  test("keeps exact totals beyond the 32-bit range", () => {
    const a = new Uint32Array(4);
    a[2] = 3_000_000_000;
    const merged = mergeHistograms([a, a, new Uint32Array([1])]);
    expect(merged[2]).toBe(6_000_000_000);
    expect(merged[0]).toBe(1);
  });

  test("reports 0 for a value outside the histogram", () => {
    expect(countAt(new Uint32Array([5]), 7)).toBe(0);
  });

  test("gives NaN statistics and a zero count for an empty histogram", () => {
    const s = statsFromHistogram(new Uint32Array(16));
    expect(s.count).toBe(0);
    expect([s.min, s.max, s.mean, s.sd].every(Number.isNaN)).toBe(true);
    expect(s.countAtCeiling).toBeNull();
  });
});

describe("histogram16 on any view of 16-bit data", () => {
  it("counts odd lengths and views that do not start on a 4-byte boundary exactly like a plain count", () => {
    const data = Uint16Array.from({ length: 1001 }, (_, i) => (i * 7919) % 65536);
    for (const view of [data, data.subarray(1), data.subarray(3, 998)]) {
      const expected = new Uint32Array(65536);
      for (const v of view) expected[v]++;
      expect(histogram16(view)).toEqual(expected);
    }
  });
});
