import { describe, expect, test } from "vitest";
import { singleHueTable } from "@/lib/imaging/colour-tables";
import { addSaturate, compositeAdd, compositeAddClampedLanes, compositeMax, maxLanes } from "@/lib/imaging/composite";
import { buildLut, buildRgbaLut, unpackRgba } from "@/lib/imaging/lut";
import { rng } from "../helpers/rng";

const bytes = (w: number) => [w & 255, (w >>> 8) & 255, (w >>> 16) & 255, w >>> 24];

describe("packed lane arithmetic", () => {
  test("addSaturate adds each byte and clamps at 255, for every pair of byte values in every lane", () => {
    // Exhaustive over byte pairs, placed in all four lanes with random neighbours (carries must not leak).
    const next = rng(7);
    for (let a = 0; a < 256; a++) {
      for (let b = 0; b < 256; b++) {
        const lane = (a + b) & 3;
        const fillA = Math.floor(next() * 2 ** 32);
        const fillB = Math.floor(next() * 2 ** 32);
        const wa = ((fillA & ~(255 << (8 * lane))) | (a << (8 * lane))) >>> 0;
        const wb = ((fillB & ~(255 << (8 * lane))) | (b << (8 * lane))) >>> 0;
        const expected = bytes(wa).map((x, k) => Math.min(255, x + bytes(wb)[k]));
        expect(bytes(addSaturate(wa, wb))).toEqual(expected);
      }
    }
  });

  test("maxLanes takes the larger byte in each lane, for every pair of byte values", () => {
    const next = rng(8);
    for (let a = 0; a < 256; a++) {
      for (let b = 0; b < 256; b++) {
        const lane = (a ^ b) & 3;
        const wa = ((Math.floor(next() * 2 ** 32) & ~(255 << (8 * lane))) | (a << (8 * lane))) >>> 0;
        const wb = ((Math.floor(next() * 2 ** 32) & ~(255 << (8 * lane))) | (b << (8 * lane))) >>> 0;
        expect(bytes(maxLanes(wa, wb))).toEqual(bytes(wa).map((x, k) => Math.max(x, bytes(wb)[k])));
      }
    }
  });
});

function channels(n: number, count: number) {
  const next = rng(42);
  const colours = ["#FF00FF", "#00FF00", "#56B4E9", "#E69F00", "#FFFFFF"];
  return Array.from({ length: count }, (_, c) => ({
    pixels: Uint16Array.from({ length: n }, () => Math.floor(next() * 4096)),
    rgbaLut: buildRgbaLut(buildLut({ black: 100 * c, white: 3000 + 200 * c }, 4095), singleHueTable(colours[c])),
  }));
}

describe("compositeAdd", () => {
  test.each([1, 2, 3, 5])("sums %i channels per component and clamps at 255, like a per-pixel if/else reference", (count) => {
    const chans = channels(2000, count);
    const out = compositeAdd(chans, new Uint32Array(2000));
    for (let i = 0; i < 2000; i++) {
      const sum = [0, 0, 0];
      for (const c of chans) bytes(c.rgbaLut[c.pixels[i]]).slice(0, 3).forEach((x, k) => (sum[k] += x));
      expect(unpackRgba(out[i])).toEqual([...sum.map((s) => (s > 255 ? 255 : s)), 255]);
    }
  });

  test("gives the same result as the Uint8ClampedArray-lane variant", () => {
    const chans = channels(5000, 3);
    expect(compositeAdd(chans, new Uint32Array(5000))).toEqual(compositeAddClampedLanes(chans, new Uint32Array(5000)));
  });

  test("rejects channels of different sizes", () => {
    const [a, b] = channels(10, 2);
    expect(() => compositeAdd([a, { ...b, pixels: b.pixels.subarray(1) }], new Uint32Array(10))).toThrow(RangeError);
  });
});

describe("compositeMax", () => {
  test.each([2, 3, 4])("takes the largest value per component over %i channels", (count) => {
    const chans = channels(2000, count);
    const out = compositeMax(chans, new Uint32Array(2000));
    for (let i = 0; i < 2000; i++) {
      const max = [0, 0, 0];
      for (const c of chans) bytes(c.rgbaLut[c.pixels[i]]).slice(0, 3).forEach((x, k) => (max[k] = Math.max(max[k], x)));
      expect(unpackRgba(out[i])).toEqual([...max, 255]);
    }
  });
});
