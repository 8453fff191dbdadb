import { readFileSync } from "node:fs";
import { resolve } from "node:path";
import { quantile, quantileSorted } from "d3-array";
import { afterAll, beforeAll, describe, expect, test } from "vitest";
import { histogram16, mergeHistograms } from "@/lib/imaging/histogram";
import { percentileFromHistogram, percentiles, STANDARD_PERCENTILES } from "@/lib/imaging/percentile";
import { loadStackFixture, PERCENTS, type StackFixture } from "./stack-fixture";
import { rng } from "../helpers/rng";

// R. J. Hyndman & Y. Fan (1996), "Sample quantiles in statistical packages", The American Statistician 50(4):361–365.
const hf = JSON.parse(readFileSync(resolve(import.meta.dirname, "../../../shared/reference/quantile_hyndman_fan_type7.json"), "utf8")) as {
  published_examples_d3_test_suite: Record<"even" | "odd", { x: number[]; p: number[]; expected: number[] }>;
  worked_example_by_hand: { x_unsorted: number[]; p: number[]; expected_by_hand: number[] };
};

const hist = (x: number[]) => histogram16(Uint16Array.from(x));


describe("percentileFromHistogram, Hyndman & Fan (1996) type 7", () => {
  test.each(["even", "odd"] as const)("reproduces the %s example of d3-array's test suite (reference JSON)", (name) => {
    const { x, p, expected } = hf.published_examples_d3_test_suite[name];
    const h = hist(x);
    p.forEach((q, i) => expect(percentileFromHistogram(h, x.length, q * 100)).toBeCloseTo(expected[i], 9));
  });

  test("reproduces the worked example by hand, from unsorted data (reference JSON)", () => {
    const { x_unsorted: x, p, expected_by_hand: expected } = hf.worked_example_by_hand;
    const h = hist(x);
    p.forEach((q, i) => expect(percentileFromHistogram(h, x.length, q * 100)).toBeCloseTo(expected[i], 9));
  });

  test("equals d3-array's quantile and quantileSorted exactly on 300 random data sets", () => {
    const next = rng(1996);
    for (let trial = 0; trial < 300; trial++) {
      const n = 1 + Math.floor(next() * 500);
      const range = [2, 16, 4096, 65536][trial % 4];
      const x = Array.from({ length: n }, () => Math.floor(next() * range));
      const sorted = [...x].sort((a, b) => a - b);
      const ps = [0, 100, ...STANDARD_PERCENTILES, next() * 100];
      const ours = percentiles(hist(x), ps);
      ps.forEach((p, i) => {
        // d3-array 3 quantile(): R-7 / type 7; quantileSorted sorts first — both are references from npm.
        expect(ours[i], `n=${n} p=${p}`).toBe(quantile(x, p / 100));
        expect(ours[i]).toBe(quantileSorted(sorted, p / 100));
      });
    }
  });

  test("gives the same answer one percentile at a time and in one walk", () => {
    const h = hist([5, 1, 9, 9, 2, 40000, 7]);
    const all = percentiles(h, STANDARD_PERCENTILES);
    STANDARD_PERCENTILES.forEach((p, i) => expect(percentileFromHistogram(h, 7, p)).toBe(all[i]));
  });

  test("rejects a percentile outside 0…100 and a total larger than the histogram", () => {
    expect(() => percentileFromHistogram(hist([1, 2]), 2, 101)).toThrow(RangeError);
    expect(() => percentileFromHistogram(hist([1, 2]), 5, 50)).toThrow(/fewer than 5 pixels/);
  });

  test("returns NaN for an empty histogram", () => {
    expect(percentileFromHistogram(new Uint32Array(8), 0, 50)).toBeNaN();
  });
});

describe("percentiles against numpy.percentile (default method linear = type 7) on the seeded stack", () => {
  let fx: StackFixture;
  beforeAll(() => {
    fx = loadStackFixture();
  });
  afterAll(() => fx.remove());

  test("matches every plane", () => {
    fx.planes.forEach((plane, i) => {
      const ours = percentiles(histogram16(plane), PERCENTS, plane.length);
      fx.ref.planes[i].percentiles.forEach((v, k) => expect(ours[k], `plane ${i} p=${PERCENTS[k]}`).toBeCloseTo(v, 9));
    });
  });

  test("matches the whole stack from merged plane histograms", () => {
    const merged = mergeHistograms(fx.planes.map((p) => histogram16(p)));
    const ours = percentiles(merged, PERCENTS);
    fx.ref.all.percentiles.forEach((v, k) => expect(ours[k]).toBeCloseTo(v, 9));
  });
});
