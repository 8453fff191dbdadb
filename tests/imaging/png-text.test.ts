import { crc32 as zlibCrc32 } from "node:zlib";
import { PNG } from "pngjs";
import { describe, expect, test } from "vitest";
import { crc32, pngChunks, readTextChunks, withTextChunk } from "@/lib/imaging/png-text";
import { rng } from "../helpers/rng";

function samplePng(width: number, height: number): { png: Uint8Array; pixels: Buffer } {
  const image = new PNG({ width, height });
  for (let i = 0; i < image.data.length; i++) image.data[i] = (i * 53 + 7) % 256;
  for (let i = 3; i < image.data.length; i += 4) image.data[i] = 255;
  return { png: new Uint8Array(PNG.sync.write(image)), pixels: Buffer.from(image.data) };
}

describe("PNG text chunks", () => {
  test("CRC-32 equals zlib's (Node's zlib.crc32, ISO 3309) on random bytes", () => {
    const random = rng(5);
    for (const n of [0, 1, 13, 1000]) {
      const bytes = Uint8Array.from({ length: n }, () => Math.floor(random() * 256));
      expect(crc32(bytes)).toBe(zlibCrc32(bytes));
    }
    // The check value of CRC-32 on "123456789" is 0xCBF43926 (common practice: the standard check value).
    expect(crc32(new TextEncoder().encode("123456789"))).toBe(0xcbf43926);
  });

  test("an inserted iTXt chunk is read back, UTF-8 intact, and the pixels are unchanged (pngjs checks every CRC)", () => {
    const { png, pixels } = samplePng(7, 5);
    const text = JSON.stringify({ title: "Zellkern – 10 µm", n: 1 });
    const out = withTextChunk(png, "fluxframe-figure", text);
    expect(readTextChunks(out)).toEqual({ "fluxframe-figure": text });
    const decoded = PNG.sync.read(Buffer.from(out));
    expect(decoded.width).toBe(7);
    expect(Buffer.from(decoded.data).equals(pixels)).toBe(true);
    const types = pngChunks(out).map((c) => c.type);
    expect(types.indexOf("iTXt")).toBeLessThan(types.indexOf("IDAT"));
    expect(types.at(-1)).toBe("IEND");
  });

  test("refuses a damaged file and a bad keyword", () => {
    const { png } = samplePng(2, 2);
    const broken = png.slice();
    broken[20] ^= 1; // inside IHDR's data: its CRC no longer matches
    expect(() => pngChunks(broken)).toThrow(/Wrong CRC/);
    expect(() => pngChunks(new Uint8Array([1, 2, 3]))).toThrow(/signature/);
    expect(() => withTextChunk(png, "", "x")).toThrow(RangeError);
    expect(() => withTextChunk(png, "two  spaces", "x")).toThrow(RangeError);
    expect(() => withTextChunk(png, "k".repeat(80), "x")).toThrow(RangeError);
  });
});
