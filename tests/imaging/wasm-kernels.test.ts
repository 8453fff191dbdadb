// The WebAssembly composite kernels: the committed binary is what the WebAssembly text in
// scripts/build-wasm.ts assembles to (wabt), and the kernels give, word for word, a plain per-pixel
// sum or maximum written here, across the chunks the planes are copied in by. The composites' edge
// cases (clamping, tables, lengths) run on both paths in composite.test.ts.
import { afterEach, describe, expect, test } from "vitest";
import { assembleKernels, kernelsModuleSource } from "@/scripts/build-wasm";
import { KERNELS_WASM_BASE64 } from "@/lib/imaging/wasm/kernels-binary";
import { setWasmKernels, wasmComposite, wasmKernelsAvailable } from "@/lib/imaging/wasm/kernels";
import { packRgba, unpackRgba } from "@/lib/imaging/lut";
import { rng } from "../helpers/rng";

const next = rng(2026);
const randomTable = () => Uint32Array.from({ length: 65536 }, () => packRgba(Math.floor(next() * 256), Math.floor(next() * 256), Math.floor(next() * 256), 255));
const randomPlane = (n: number) => Uint16Array.from({ length: n }, () => Math.floor(next() * 65536));

function reference(op: "add" | "max", chans: { pixels: Uint16Array | Uint8Array; rgbaLut: Uint32Array }[], n: number): Uint32Array {
  const out = new Uint32Array(n);
  for (let i = 0; i < n; i++) {
    const acc = [0, 0, 0, 0];
    for (const c of chans) unpackRgba(c.rgbaLut[c.pixels[i]]).forEach((x, k) => (acc[k] = op === "add" ? Math.min(255, acc[k] + x) : Math.max(acc[k], x)));
    out[i] = packRgba(acc[0], acc[1], acc[2], acc[3]);
  }
  return out;
}

const firstDifference = (a: Uint32Array, b: Uint32Array) => a.findIndex((x, i) => x !== b[i]);

afterEach(() => setWasmKernels(true));

describe("the committed WebAssembly module", () => {
  test("is exactly what scripts/build-wasm.ts assembles from its WebAssembly text", async () => {
    const bytes = await assembleKernels();
    expect(Buffer.from(KERNELS_WASM_BASE64, "base64").equals(Buffer.from(bytes))).toBe(true);
    expect(kernelsModuleSource(bytes)).toContain(KERNELS_WASM_BASE64.slice(0, 100));
  });

  test("compiles and runs on this Node (WebAssembly SIMD), and can be switched off", () => {
    expect(wasmKernelsAvailable()).toBe(true);
    setWasmKernels(false);
    expect(wasmKernelsAvailable()).toBe(false);
    const chans = [{ pixels: randomPlane(8), rgbaLut: randomTable() }];
    const out = new Uint32Array(8).fill(7);
    expect(wasmComposite("add", chans, out)).toBe(false);
    expect([...out]).toEqual(new Array(8).fill(7));
  });
});

describe("wasmComposite", () => {
  // 32,768 pixels go in per chunk: lengths across one and several chunk boundaries, with tails of
  // 0–3 pixels past the last whole step of four.
  const lengths = [1, 3, 4, 7, 32767, 32768, 32769, 2 * 32768 + 5, 100_003];

  const cases = (["add", "max"] as const).flatMap((op) => [1, 2, 3, 4].map((count) => [op, count] as const));

  // "add": per-byte saturating sum; "max": per-byte maximum.
  test.each(cases)("%s over %i channels, at every chunk boundary", (op, count) => {
    const tables = Array.from({ length: count }, randomTable);
    for (const n of lengths) {
      const chans = tables.map((rgbaLut) => ({ pixels: randomPlane(n), rgbaLut }));
      const out = new Uint32Array(n);
      expect(wasmComposite(op, chans, out)).toBe(true);
      expect([count, n, firstDifference(out, reference(op, chans, n))]).toEqual([count, n, -1]);
    }
  });

  test("widens 8-bit planes and reads only the first 256 entries of a short table", () => {
    const n = 40_001;
    const chans = [0, 1].map(() => ({ pixels: Uint8Array.from({ length: n }, () => Math.floor(next() * 256)), rgbaLut: randomTable().slice(0, 256) }));
    const out = new Uint32Array(n);
    expect(wasmComposite("add", chans, out)).toBe(true);
    expect(firstDifference(out, reference("add", chans, n))).toBe(-1);
  });

  test("never writes the caller's pixels or tables, nor the output past n", () => {
    const n = 33_000;
    const chans = [0, 1, 2].map(() => ({ pixels: randomPlane(n), rgbaLut: randomTable() }));
    const copies = chans.map((c) => ({ pixels: c.pixels.slice(), rgbaLut: c.rgbaLut.slice() }));
    const out = new Uint32Array(n + 4).fill(0xdeadbeef);
    expect(wasmComposite("add", chans, out.subarray(0, n))).toBe(true);
    chans.forEach((c, i) => {
      expect(c.pixels).toEqual(copies[i].pixels);
      expect(c.rgbaLut).toEqual(copies[i].rgbaLut);
    });
    expect([...out.subarray(n)]).toEqual(new Array(4).fill(0xdeadbeef));
  });

  test("declines five channels, leaving them to the JavaScript loops", () => {
    const chans = Array.from({ length: 5 }, () => ({ pixels: randomPlane(16), rgbaLut: randomTable() }));
    expect(wasmComposite("add", chans, new Uint32Array(16))).toBe(false);
  });
});
