import { afterAll, beforeAll, describe, expect, test } from "vitest";
import { clipMarkRgbaLut } from "@/lib/imaging/clip-marks";
import { findTable, greyTable, singleHueTable } from "@/lib/imaging/colour-tables";
import { addSaturate, compositeAdd, compositeAddClampedLanes, compositeMax, maxLanes } from "@/lib/imaging/composite";
import { buildLut, buildRgbaLut, packRgba, unpackRgba, type LevelMapping } from "@/lib/imaging/lut";
import { setWasmKernels, wasmKernelsAvailable } from "@/lib/imaging/wasm/kernels";
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
    // 65,536 expect calls: seconds on a busy shared machine, beyond the 5 s default.
  }, 30_000);

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
  }, 30_000);
});

// Every composite below runs twice: through the WebAssembly kernels (lib/imaging/wasm), which
// Node 20 and Chromium run, and with them switched off, through the JavaScript loops that browsers
// without WebAssembly SIMD (or a CSP that forbids it) use. Both must give the same words.
describe.each([
  ["WebAssembly kernels", true],
  ["JavaScript loops", false],
])("%s", (_path, wasm) => {
  beforeAll(() => setWasmKernels(wasm));
  afterAll(() => setWasmKernels(true));

  test("the path under test is the one running", () => {
    expect(wasmKernelsAvailable()).toBe(wasm);
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

  // compositeAdd takes a spread-field path for 2–4 channels of 16-bit pixels on whole words and the
  // packed path otherwise. Both must give, word for word, what a plain per-pixel reference gives: each
  // of R, G, B, A the sum over channels, 255 where the sum passes 255.
  describe("compositeAdd fast path against a per-pixel reference", () => {
    const referenceAdd = (chans: { pixels: Uint16Array | Uint8Array; rgbaLut: Uint32Array }[], n: number) => {
      const out = new Uint32Array(n);
      for (let i = 0; i < n; i++) {
        const sum = [0, 0, 0, 0];
        for (const c of chans) unpackRgba(c.rgbaLut[c.pixels[i]]).forEach((x, k) => (sum[k] += x));
        const [r, g, b, a] = sum.map((s) => (s > 255 ? 255 : s));
        out[i] = packRgba(r, g, b, a);
      }
      return out;
    };
    const firstDifference = (a: Uint32Array, b: Uint32Array) => a.findIndex((x, i) => x !== b[i]);
    const next = rng(99);
    const randomPlane = (n: number, max: number) => Uint16Array.from({ length: n }, () => Math.floor(next() * (max + 1)));
    // Level mappings over the edge cases: a one-count window, gamma on both sides of 1, the full range.
    const mappings: LevelMapping[] = [
      { black: 100, white: 3000 },
      { black: 2047, white: 2048 },
      { black: 0, white: 65535 },
      { black: 150, white: 3500, gamma: 0.45 },
      { black: 10, white: 900, gamma: 2.2 },
      { black: 4094, white: 4095 },
    ];
    const tables = [singleHueTable("#FF00FF"), singleHueTable("#00FF00"), findTable("viridis")!, greyTable(), singleHueTable("#E69F00")];
    const lutFor = (m: number, t: number) => buildRgbaLut(buildLut(mappings[m % mappings.length], 65535), tables[t % tables.length]);

    test.each([1, 2, 3, 4, 5])("%i channels of random 16-bit and 12-bit planes, at odd and even lengths", (count) => {
      for (const n of [1, 2, 3, 4, 5, 1001, 4096]) {
        for (const max of [65535, 4095]) {
          for (let trial = 0; trial < 3; trial++) {
            const chans = Array.from({ length: count }, (_, c) => ({ pixels: randomPlane(n, max), rgbaLut: lutFor(c + trial, c + 2 * trial) }));
            expect(firstDifference(compositeAdd(chans, new Uint32Array(n)), referenceAdd(chans, n))).toBe(-1);
          }
        }
      }
    });

    test("all pixels at zero, all at the ceiling, and every channel saturating every component", () => {
      const n = 1001;
      for (const count of [2, 3, 4]) {
        for (const fill of [0, 4095, 65535]) {
          const chans = Array.from({ length: count }, (_, c) => ({ pixels: new Uint16Array(n).fill(fill), rgbaLut: lutFor(c, c) }));
          expect(firstDifference(compositeAdd(chans, new Uint32Array(n)), referenceAdd(chans, n))).toBe(-1);
        }
        const white = buildRgbaLut(buildLut({ black: 0, white: 1 }, 65535), greyTable());
        const chans = Array.from({ length: count }, () => ({ pixels: randomPlane(n, 65535), rgbaLut: white }));
        const out = compositeAdd(chans, new Uint32Array(n));
        expect(firstDifference(out, referenceAdd(chans, n))).toBe(-1);
      }
    });

    test("every pair of component values clamps exactly, with a third and fourth channel on top", () => {
      // Channel c maps value v to v in one component, so pixel values pick the summands directly.
      const n = 256 * 256;
      for (const count of [2, 3, 4]) {
        for (const lane of [0, 1, 2]) {
          const chans = Array.from({ length: count }, (_, c) => {
            const rgbaLut = new Uint32Array(65536);
            for (let v = 0; v < 65536; v++) {
              const x = v & 255;
              const rgb = [0, 0, 0];
              rgb[lane] = x;
              // Other components get a different value so a carry between fields would show.
              rgb[(lane + 1) % 3] = 255 - x;
              rgbaLut[v] = packRgba(rgb[0], rgb[1], rgb[2], 255);
            }
            return { pixels: Uint16Array.from({ length: n }, (_, i) => (c === 0 ? i & 255 : c === 1 ? i >> 8 : (i * 31 + c) & 255)), rgbaLut };
          });
          expect(firstDifference(compositeAdd(chans, new Uint32Array(n)), referenceAdd(chans, n))).toBe(-1);
        }
      }
    });

    test("clipping-mark tables, translucent tables, 8-bit planes and views off a 4-byte boundary", () => {
      const n = 1001;
      const marked = clipMarkRgbaLut(lutFor(0, 2), { highFrom: 4095, lowTo: 100 }, "#FF0000", "#0000FF");
      const translucent = lutFor(1, 1).map((x) => (x & 0x00ffffff) | (((x & 0xff) >> 1) << 24));
      const cases: { pixels: Uint16Array | Uint8Array; rgbaLut: Uint32Array }[][] = [
        [
          { pixels: randomPlane(n, 4095), rgbaLut: marked },
          { pixels: randomPlane(n, 4095), rgbaLut: lutFor(1, 1) },
        ],
        // Only translucent tables: the result's alpha is a real sum, so the packed path answers.
        [
          { pixels: randomPlane(n, 65535), rgbaLut: translucent },
          { pixels: randomPlane(n, 65535), rgbaLut: translucent },
        ],
        // One opaque table makes every result opaque.
        [
          { pixels: randomPlane(n, 65535), rgbaLut: translucent },
          { pixels: randomPlane(n, 65535), rgbaLut: lutFor(2, 2) },
          { pixels: randomPlane(n, 65535), rgbaLut: translucent },
        ],
        [
          { pixels: Uint8Array.from({ length: n }, () => Math.floor(next() * 256)), rgbaLut: lutFor(3, 3) },
          { pixels: Uint8Array.from({ length: n }, () => Math.floor(next() * 256)), rgbaLut: lutFor(4, 4) },
        ],
        [
          { pixels: randomPlane(n + 1, 65535).subarray(1), rgbaLut: lutFor(0, 0) },
          { pixels: randomPlane(n + 1, 65535).subarray(1), rgbaLut: lutFor(1, 1) },
          { pixels: randomPlane(n + 1, 65535).subarray(1), rgbaLut: lutFor(2, 2) },
        ],
      ];
      for (const chans of cases) expect(firstDifference(compositeAdd(chans, new Uint32Array(n)), referenceAdd(chans, n))).toBe(-1);
    });

    test("writes into a view of a larger output buffer without touching the rest", () => {
      const n = 1001;
      const chans = [0, 1, 2].map((c) => ({ pixels: randomPlane(n, 4095), rgbaLut: lutFor(c, c) }));
      const buffer = new Uint32Array(n + 8).fill(0x12345678);
      compositeAdd(chans, buffer.subarray(4, 4 + n));
      expect(firstDifference(buffer.subarray(4, 4 + n), referenceAdd(chans, n))).toBe(-1);
      expect([...buffer.subarray(0, 4), ...buffer.subarray(4 + n)]).toEqual(new Array(8).fill(0x12345678));
    });
  });

  // The 2- and 3-channel spread loops take eight pixels per step, with a tail of one word at a time,
  // and carry a +256 bias in the first table so that bit 9 of a field alone marks a sum past 255.
  // Every loop tail, the exact clamp boundary and reuse of the shared tables between channel counts
  // are checked against a plain per-pixel sum written here.
  describe("compositeAdd eight-pixel loops against a plain per-pixel sum", () => {
    const plainAdd = (chans: { pixels: Uint16Array; rgbaLut: Uint32Array }[], n: number) => {
      const out = new Uint32Array(n);
      for (let i = 0; i < n; i++) {
        let r = 0;
        let g = 0;
        let b = 0;
        let a = 0;
        for (const c of chans) {
          const [cr, cg, cb, ca] = unpackRgba(c.rgbaLut[c.pixels[i]]);
          r += cr;
          g += cg;
          b += cb;
          a += ca;
        }
        out[i] = packRgba(Math.min(r, 255), Math.min(g, 255), Math.min(b, 255), Math.min(a, 255));
      }
      return out;
    };
    const firstDifference = (a: Uint32Array, b: Uint32Array) => a.findIndex((x, i) => x !== b[i]);
    const next = rng(4242);
    // Any opaque colour per raw value: sums pass 255 in some components and not in others.
    const randomTable = () => Uint32Array.from({ length: 65536 }, () => packRgba(Math.floor(next() * 256), Math.floor(next() * 256), Math.floor(next() * 256), 255));
    // Raw values: 0, 65535 and anything between.
    const edgyPlane = (n: number) => Uint16Array.from({ length: n }, () => [0, 65535, Math.floor(next() * 65536)][Math.floor(next() * 3)]);

    test("every length 1…40 (every tail of the eight-pixel step, odd and even) for 2, 3 and 4 channels", () => {
      const tables = [randomTable(), randomTable(), randomTable(), randomTable()];
      for (const count of [2, 3, 4]) {
        for (let n = 1; n <= 40; n++) {
          const chans = tables.slice(0, count).map((rgbaLut) => ({ pixels: edgyPlane(n), rgbaLut }));
          expect([count, n, firstDifference(compositeAdd(chans, new Uint32Array(n)), plainAdd(chans, n))]).toEqual([count, n, -1]);
        }
      }
    });

    test("sums just below, at and above 255 in each component, for every triple of chosen levels", () => {
      // Component levels whose sums of two or three hit 254, 255, 256, 510 and 765 exactly.
      const levels = [0, 1, 85, 127, 128, 170, 254, 255];
      const table = (lane: number) => {
        const t = new Uint32Array(65536);
        for (let v = 0; v < 65536; v++) {
          const rgb = [0, 0, 0];
          rgb[lane] = levels[v & 7];
          rgb[(lane + 2) % 3] = levels[(v >> 3) & 7]; // a neighbouring field changes too, so a carry would show
          t[v] = packRgba(rgb[0], rgb[1], rgb[2], 255);
        }
        return t;
      };
      const n = 512; // 8³ triples, plus 8 × 8 × 8 for the neighbouring field
      for (const count of [2, 3]) {
        for (const lane of [0, 1, 2]) {
          const chans = Array.from({ length: count }, (_, c) => ({
            pixels: Uint16Array.from({ length: n }, (_, i) => ((i >> (3 * c)) & 7) | (((i >> (3 * ((c + 1) % 3))) & 7) << 3)),
            rgbaLut: table(lane),
          }));
          expect(firstDifference(compositeAdd(chans, new Uint32Array(n)), plainAdd(chans, n))).toBe(-1);
        }
      }
    });

    test("calls with 4, 3, 2 and again 4 and 3 channels reuse the shared tables without leftovers", () => {
      const n = 257;
      const planes = Array.from({ length: 4 }, () => edgyPlane(n));
      const tables = [randomTable(), randomTable(), randomTable(), randomTable()];
      for (const count of [4, 3, 2, 4, 3, 2, 3]) {
        // Rotate which table comes first, so the biased table changes from call to call.
        const chans = planes.slice(0, count).map((pixels, c) => ({ pixels, rgbaLut: tables[(c + count) % 4] }));
        expect(firstDifference(compositeAdd(chans, new Uint32Array(n)), plainAdd(chans, n))).toBe(-1);
      }
    });
  });
});
