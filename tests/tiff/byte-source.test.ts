import { readFileSync, writeFileSync } from "node:fs";
import { afterAll, describe, expect, test } from "vitest";
import { bufferSource, windowedSource } from "@/lib/tiff/byte-source";
import { fileSource } from "@/lib/tiff/file-source";
import { countingSource, tempDir } from "@/tests/helpers/tiff-tools";

const tmp = tempDir("bytes");
afterAll(() => tmp.remove());
const bytes = Uint8Array.from({ length: 1000 }, (_, i) => (i * 31) % 256);

describe("byte sources", () => {
  test("a file source returns the same bytes as reading the whole file", async () => {
    writeFileSync(tmp.path("f.bin"), bytes);
    const src = await fileSource(tmp.path("f.bin"));
    expect(src.size).toBe(1000);
    expect(new Uint8Array(await src.read(123, 456))).toEqual(new Uint8Array(readFileSync(tmp.path("f.bin"))).subarray(123, 579));
    expect((await src.read(990, 50)).byteLength).toBe(10);
    await src.close();
  });

  test("a buffer source returns a copy the caller may change", async () => {
    const src = bufferSource(bytes);
    const part = new Uint8Array(await src.read(0, 4));
    part[0] = 99;
    expect(new Uint8Array(await src.read(0, 4))[0]).toBe(0);
  });

  test("rejects a negative or fractional range", async () => {
    await expect(bufferSource(bytes).read(-1, 4)).rejects.toThrow(/Invalid byte range/);
    await expect(bufferSource(bytes).read(1.5, 4)).rejects.toThrow(/Invalid byte range/);
  });

  test("a windowed source joins reads that cross window edges", async () => {
    const counted = countingSource(bufferSource(bytes));
    const win = windowedSource(counted.source, { windowSize: 100, maxWindows: 2 });
    expect(new Uint8Array(await win.read(95, 110))).toEqual(bytes.subarray(95, 205));
    expect(counted.reads.map((r) => r.offset)).toEqual([0, 100, 200]);
    // Only two windows are kept: window 0 was dropped and is read again.
    await win.read(0, 1);
    expect(counted.reads).toHaveLength(4);
  });
});
