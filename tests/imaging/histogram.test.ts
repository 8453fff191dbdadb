import { afterAll, beforeAll, describe, expect, it, test } from "vitest";
import { countAt, histogram16, mergeHistograms, statsFromHistogram } from "@/lib/imaging/histogram";
import { rng } from "../helpers/rng";
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

// The word-at-a-time counting loop (histogram16's fast path) against the obvious per-pixel count, on
// random planes and edge cases; statsFromHistogram against statistics computed from the pixels.
describe("histogram16 fast path against a per-pixel reference", () => {
  const reference = (pixels: Uint16Array | Uint8Array, bins = 65536) => {
    const counts = new Uint32Array(bins);
    for (let i = 0; i < pixels.length; i++) counts[pixels[i]]++;
    return counts;
  };
  // toEqual on 65,536 entries is slow; the first differing bin (−1: none) says the same and more.
  const firstDifference = (a: Uint32Array, b: Uint32Array) => (a.length !== b.length ? -2 : a.findIndex((x, i) => x !== b[i]));
  const next = rng(2024);
  const planes: [string, Uint16Array][] = [
    ["empty", new Uint16Array(0)],
    ["one pixel", Uint16Array.of(65535)],
    ["all zeros", new Uint16Array(4099)],
    ["all at the 16-bit ceiling", new Uint16Array(4099).fill(65535)],
    ["all at the 12-bit ceiling", new Uint16Array(4100).fill(4095)],
    ["random 16-bit", Uint16Array.from({ length: 10_007 }, () => Math.floor(next() * 65536))],
    ["random 12-bit", Uint16Array.from({ length: 10_008 }, () => Math.floor(next() * 4096))],
    ["runs of equal values", Uint16Array.from({ length: 9_999 }, (_, i) => (i >> 5) % 3 === 0 ? 100 : Math.floor(next() * 8))],
    ["alternating extremes", Uint16Array.from({ length: 1_001 }, (_, i) => (i & 1 ? 65535 : 0))],
  ];

  test.each(planes)("%s: same counts for the plane and for views at every 2-byte offset", (_, plane) => {
    for (const start of [0, 1, 2, 3]) {
      for (const trim of [0, 1]) {
        const view = plane.subarray(Math.min(start, plane.length), Math.max(Math.min(start, plane.length), plane.length - trim));
        expect(firstDifference(histogram16(view), reference(view))).toBe(-1);
      }
    }
  });

  test("8-bit planes and bin counts below the value range keep their own loops", () => {
    const bytes = Uint8Array.from({ length: 3001 }, () => Math.floor(next() * 256));
    expect(firstDifference(histogram16(bytes, 256), reference(bytes, 256))).toBe(-1);
    expect(firstDifference(histogram16(bytes), reference(bytes))).toBe(-1);
    const small = Uint16Array.from({ length: 3001 }, () => Math.floor(next() * 4096));
    expect(firstDifference(histogram16(small, 4096), reference(small, 4096))).toBe(-1);
  });

  test.each(planes.filter(([, p]) => p.length > 0))("%s: statistics equal those computed pixel by pixel", (_, plane) => {
    const s = statsFromHistogram(histogram16(plane), 4095);
    let min = Infinity;
    let max = -Infinity;
    let sum = 0;
    let zero = 0;
    let ceiling = 0;
    for (const v of plane) {
      min = Math.min(min, v);
      max = Math.max(max, v);
      sum += v; // exact: at most 65,535 × 10⁴ < 2⁵³
      if (v === 0) zero++;
      if (v === 4095) ceiling++;
    }
    const mean = sum / plane.length;
    let squares = 0;
    for (const v of plane) squares += (v - mean) ** 2;
    expect([s.count, s.min, s.max, s.countAtZero, s.countAtCeiling]).toEqual([plane.length, min, max, zero, ceiling]);
    expect(s.mean).toBe(mean);
    expect(s.sd).toBeCloseTo(Math.sqrt(squares / plane.length), 6);
  });
});

// The word loop counts into one shared array of 65,536 counters, handed back as a fresh Uint32Array
// and zeroed for the next call; nothing may carry over from one plane to the next.
describe("histogram16 shared counters between calls", () => {
  const reference = (pixels: Uint16Array) => {
    const counts = new Uint32Array(65536);
    for (let i = 0; i < pixels.length; i++) counts[pixels[i]]++;
    return counts;
  };
  const firstDifference = (a: Uint32Array, b: Uint32Array) => a.findIndex((x, i) => x !== b[i]);

  test("planes counted one after another each match a per-pixel count, and earlier results stay unchanged", () => {
    const next = rng(77);
    const planes = [
      Uint16Array.from({ length: 20_001 }, () => Math.floor(next() * 65536)),
      new Uint16Array(5_000).fill(65535),
      Uint16Array.from({ length: 7 }, () => Math.floor(next() * 4096)),
      new Uint16Array(9_000), // all zeros
      Uint16Array.from({ length: 12_345 }, () => 100 + Math.floor(next() * 8)), // few, often repeated values
    ];
    const results = planes.map((p) => histogram16(p));
    results.forEach((h, i) => expect([i, firstDifference(h, reference(planes[i]))]).toEqual([i, -1]));
    // Counted again in reverse order: the same counts.
    [...planes].reverse().forEach((p, i) => expect([i, firstDifference(histogram16(p), reference(p))]).toEqual([i, -1]));
  });
});
