import { describe, expect, test } from "vitest";
import { greyTable, singleHueTable } from "@/lib/imaging/colour-tables";
import { mapToLevels } from "@/lib/imaging/mapping";
import { buildLut, buildRgbaLut, LITTLE_ENDIAN, mapChannel, mapToRgba, packRgba, unpackRgba } from "@/lib/imaging/lut";
import { rng } from "../helpers/rng";

/** Round half up of 255·(v − b)/(w − b) in integers only: an oracle that shares no float code with buildLut. */
function integerLevel(v: number, b: number, w: number): number {
  if (v <= b) return 0;
  if (v >= w) return 255;
  return Math.floor((2 * 255 * (v - b) + (w - b)) / (2 * (w - b)));
}

describe("buildLut", () => {
  test("maps the black point to 0 and the white point to 255, linear in between (issue 4 faithfulness rule)", () => {
    for (const [black, white] of [[100, 4095], [0, 65535], [1000, 1255], [37, 40], [0, 1]]) {
      const lut = buildLut({ black, white }, 65535);
      expect(lut.length).toBe(65536);
      expect(lut[black]).toBe(0);
      expect(lut[white]).toBe(255);
      for (let v = 0; v < 65536; v += v < 5000 ? 1 : 97) expect(lut[v], `v=${v} in ${black}…${white}`).toBe(integerLevel(v, black, white));
    }
  });

  test("rounds exact halves up (documented rounding)", () => {
    // black 0, white 2: value 1 is 127.5 exactly → 128.
    expect(buildLut({ black: 0, white: 2 }, 255)[1]).toBe(128);
    // black 0, white 510: value 1 is 0.5 exactly → 1; value 3 is 1.5 → 2.
    const lut = buildLut({ black: 0, white: 510 }, 1023);
    expect([lut[1], lut[3]]).toEqual([1, 2]);
  });

  test("has ceiling + 1 entries and clamps values below black and above white", () => {
    const lut = buildLut({ black: 200, white: 3000 }, 4095);
    expect(lut.length).toBe(4096);
    expect(lut.subarray(0, 201).every((x) => x === 0)).toBe(true);
    expect(lut.subarray(3000).every((x) => x === 255)).toBe(true);
  });

  test("applies gamma only when it is set and not 1", () => {
    const linear = buildLut({ black: 0, white: 4095 }, 4095);
    expect(buildLut({ black: 0, white: 4095, gamma: 1 }, 4095)).toEqual(linear);
    const g = buildLut({ black: 0, white: 4095, gamma: 0.5 }, 4095);
    expect(g).not.toEqual(linear);
    // level = round(255 · t^γ) with Math.pow as the per-pixel reference.
    for (let v = 0; v <= 4095; v++) expect(g[v]).toBe(Math.floor(255 * Math.pow(v / 4095, 0.5) + 0.5));
    expect([g[0], g[4095]]).toEqual([0, 255]);
  });

  test("agrees with the ingest thumbnail's mapToLevels on a 12-bit range, so thumbnail and bench match", () => {
    const pixels = Uint16Array.from({ length: 4096 }, (_, i) => i);
    const lut = buildLut({ black: 100, white: 3100 }, 4095);
    const levels = mapToLevels(pixels, 100, 3100);
    let differ = 0;
    for (let v = 0; v < 4096; v++) if (lut[v] !== levels[v]) differ++;
    // Both round half up; they differ only in float order of operations, which matters on no value here.
    expect(differ).toBe(0);
  });

  test("rejects a white point at or below the black point", () => {
    expect(() => buildLut({ black: 10, white: 10 })).toThrow(RangeError);
    expect(() => buildLut({ black: 0, white: 10, gamma: 0 })).toThrow(RangeError);
  });
});

describe("packed RGBA", () => {
  test("keeps the bytes in memory in the order R, G, B, A on this machine", () => {
    const word = new Uint32Array([packRgba(1, 2, 3, 4)]);
    expect([...new Uint8Array(word.buffer)]).toEqual([1, 2, 3, 4]);
    expect(unpackRgba(word[0])).toEqual([1, 2, 3, 4]);
    // Every current JS platform we target is little-endian; the packing follows the flag either way.
    expect(LITTLE_ENDIAN).toBe(true);
  });
});

describe("mapToRgba and mapChannel", () => {
  test("colours each pixel by its level through the colour table, opaque", () => {
    const pixels = Uint16Array.from([0, 50, 100, 150, 200, 65535]);
    const lut = buildLut({ black: 50, white: 150 });
    const out = new Uint32Array(pixels.length);
    mapToRgba(pixels, lut, singleHueTable("#FF00FF"), out);
    const bytes = [...new Uint8Array(out.buffer)];
    // level(100) = round(127.5) = 128; magenta ramp entry 128 = (255·128/255, 0, same) = (128, 0, 128).
    expect(bytes).toEqual([0, 0, 0, 255, 0, 0, 0, 255, 128, 0, 128, 255, 255, 0, 255, 255, 255, 0, 255, 255, 255, 0, 255, 255]);
  });

  test("gives values above a 12-bit ceiling the colour of the ceiling", () => {
    const lut = buildLut({ black: 0, white: 4095 }, 4095);
    const rgbaLut = buildRgbaLut(lut, greyTable());
    expect(rgbaLut.length).toBe(65536);
    expect(rgbaLut[5000]).toBe(rgbaLut[4095]);
  });

  test("maps 8-bit pixels through the first 256 entries", () => {
    const rgbaLut = buildRgbaLut(buildLut({ black: 0, white: 255 }, 255), greyTable());
    const out = mapChannel(Uint8Array.from([0, 255, 17]), rgbaLut, new Uint32Array(3));
    expect([...out].map(unpackRgba)).toEqual([[0, 0, 0, 255], [255, 255, 255, 255], [17, 17, 17, 255]]);
  });

  test("the word-at-a-time loop gives out[i] = rgbaLut[pixels[i]] at every length and 2-byte offset", () => {
    // A table whose every entry differs, so a swapped or shifted pixel cannot go unnoticed.
    const rgbaLut = Uint32Array.from({ length: 65536 }, (_, v) => (Math.imul(v, 2654435761) ^ 0x5a5a5a5a) >>> 0);
    const next = rng(5);
    for (const n of [0, 1, 2, 3, 4, 5, 6, 7, 1001, 4096]) {
      const data = Uint16Array.from({ length: n + 3 }, () => Math.floor(next() * 65536));
      for (const start of [0, 1, 2, 3]) {
        const pixels = data.subarray(start, start + n);
        const out = new Uint32Array(n + 2).fill(7);
        mapChannel(pixels, rgbaLut, out.subarray(1, n + 1));
        const bad = pixels.findIndex((v, i) => out[i + 1] !== rgbaLut[v]);
        expect(bad).toBe(-1);
        expect([out[0], out[n + 1]]).toEqual([7, 7]);
      }
    }
  });
});
