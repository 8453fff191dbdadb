import { quantile } from "d3-array";
import { describe, expect, test } from "vitest";
import { fitRange, regionHistogram } from "@/lib/imaging/fit";
import { histogram16 } from "@/lib/imaging/histogram";
import { rng } from "../helpers/rng";


describe("fitRange", () => {
  test("lands within one count of d3-array's type-7 quantiles, rounding outwards (Hyndman & Fan 1996)", () => {
    const next = rng(1996);
    for (let trial = 0; trial < 200; trial++) {
      const n = 2 + Math.floor(next() * 3000);
      // Skewed, camera-like data: an offset plus a long bright tail.
      const x = Array.from({ length: n }, () => Math.min(4095, Math.floor(100 + 40 * next() + (next() < 0.05 ? 4000 * next() : 0))));
      const low = [0.1, 1, 5][trial % 3];
      const high = [99.9, 99, 95][trial % 3];
      const { black, white } = fitRange(histogram16(Uint16Array.from(x)), n, { low, high, ceiling: 4095 });
      const qLow = quantile(x, low / 100)!;
      const qHigh = quantile(x, high / 100)!;
      // The documented rule: outward rounding after snapping float dust (within 1e-9 of a whole count).
      const whole = (q: number) => (Math.abs(q - Math.round(q)) < 1e-9 ? Math.round(q) : q);
      expect(black).toBe(Math.floor(whole(qLow)));
      expect(Math.abs(black - qLow)).toBeLessThan(1);
      expect(white).toBeGreaterThan(black);
      // White is forced to black + 1 only when the two percentiles fall within the same count.
      if (Math.ceil(whole(qHigh)) > black) {
        expect(white).toBe(Math.ceil(whole(qHigh)));
        expect(Math.abs(white - qHigh)).toBeLessThan(1);
      }
    }
  });

  test("uses 0.1 % and 99.9 % by default", () => {
    const x = Uint16Array.from({ length: 10001 }, (_, i) => i);
    // Type 7 on 0 … 10000: P0.1 = 10, P99.9 = 9990 exactly.
    expect(fitRange(histogram16(x), x.length)).toEqual({ black: 10, white: 9990 });
  });

  test("keeps white above black on a flat image, also at the ceiling", () => {
    expect(fitRange(histogram16(new Uint16Array(100).fill(500)), 100, { ceiling: 4095 })).toEqual({ black: 500, white: 501 });
    expect(fitRange(histogram16(new Uint16Array(100).fill(4095)), 100, { ceiling: 4095 })).toEqual({ black: 4094, white: 4095 });
  });

  test("gives the full range for an empty histogram (a region outside the image)", () => {
    expect(fitRange(new Uint32Array(4096), 0)).toEqual({ black: 0, white: 4095 });
  });
});

describe("regionHistogram", () => {
  const width = 4;
  // 4 × 3 plane with value = 10·y + x.
  const plane = Uint16Array.from({ length: 12 }, (_, i) => 10 * Math.floor(i / width) + (i % width));

  test("counts exactly the pixels inside the rectangle", () => {
    const { hist, total } = regionHistogram(plane, width, { x: 1, y: 1, width: 2, height: 2 });
    expect(total).toBe(4);
    expect([...hist.entries()].filter(([, n]) => n > 0).map(([v]) => v)).toEqual([11, 12, 21, 22]);
  });

  test("includes partly covered pixels and clips to the plane", () => {
    const { total, hist } = regionHistogram(plane, width, { x: 2.5, y: -5, width: 10, height: 5.2 });
    // Columns 2 … 3, rows 0 … 0 (y from −5 to 0.2 touches row 0 only).
    expect(total).toBe(2);
    expect([hist[2], hist[3]]).toEqual([1, 1]);
  });

  test("is empty outside the plane", () => {
    expect(regionHistogram(plane, width, { x: 10, y: 0, width: 2, height: 2 }).total).toBe(0);
  });
});
