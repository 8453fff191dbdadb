import { readFileSync, writeFileSync } from "node:fs";
import { afterAll, describe, expect, test } from "vitest";
import { bufferSource, readAheadSource, windowedSource, type ByteSource } from "@/lib/tiff/byte-source";
import { decodePlane } from "@/lib/tiff/decode";
import { readTiffHeader, readTiffStructure } from "@/lib/tiff/structure";
import { writeTiff } from "@/lib/tiff/writer";
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

  test("through a read-ahead source a plane's IFD and tag arrays cost one read, its pixels one more, values unchanged", async () => {
    // 4 planes of 96×80 in 8 strips each (our own writer; invented values).
    const planes = Array.from({ length: 4 }, (_, k) => Uint16Array.from({ length: 96 * 80 }, (_, i) => (i * 13 + k * 977) % 65536));
    const file = await writeTiff(planes, { width: 96, height: 80, bitsPerSample: 16, rowsPerStrip: 10 });
    const { ifds } = await readTiffStructure(bufferSource(file));
    const header = await readTiffHeader(bufferSource(file));
    for (const ifd of ifds) {
      const plain = countingSource(bufferSource(file));
      const direct = await decodePlane(plain.source, ifd.offset, { header });
      const counted = countingSource(bufferSource(file));
      const ahead = readAheadSource(counted.source);
      const viaAhead = await decodePlane(counted.source, ifd.offset, { header, metadataSource: ahead });
      expect(viaAhead.data).toEqual(planes[ifd.index]);
      expect(direct.data).toEqual(planes[ifd.index]);
      // Without it: the entry count, the entries and the two strip arrays, each a read of its own.
      expect(plain.reads.length).toBeGreaterThanOrEqual(4);
      expect(counted.reads.length).toBe(2);
    }
  });

  test("reads larger than the small-read limit go straight through, with the caller's signal", async () => {
    const signals: (AbortSignal | undefined)[] = [];
    const inner: ByteSource = { size: bytes.length, read: (o, l, sig) => (signals.push(sig), bufferSource(bytes).read(o, l)) };
    const ahead = readAheadSource(inner, { smallRead: 16, windowSize: 64 });
    const controller = new AbortController();
    expect(new Uint8Array(await ahead.read(100, 200, controller.signal))).toEqual(bytes.subarray(100, 300));
    expect(signals).toEqual([controller.signal]);
    expect(new Uint8Array(await ahead.read(130, 10))).toEqual(bytes.subarray(130, 140));
    expect(new Uint8Array(await ahead.read(140, 8))).toEqual(bytes.subarray(140, 148));
    expect(ahead.underlyingReads).toBe(2);
  });

  test("a window cancelled by the read that asked first is fetched again for a read still waiting on it", async () => {
    let release: () => void = () => undefined;
    const gate = new Promise<void>((r) => (release = r));
    let aborted = 0;
    const inner: ByteSource = {
      size: bytes.length,
      async read(o, l, sig) {
        await Promise.race([gate, new Promise((_, reject) => sig?.addEventListener("abort", () => (aborted++, reject(new DOMException("Read aborted", "AbortError")))))]);
        return bufferSource(bytes).read(o, l);
      },
    };
    const ahead = readAheadSource(inner, { windowSize: 128 });
    const first = new AbortController();
    const cancelled = ahead.read(10, 4, first.signal);
    const waiting = ahead.read(20, 4);
    first.abort();
    await expect(cancelled).rejects.toMatchObject({ name: "AbortError" });
    release();
    expect(new Uint8Array(await waiting)).toEqual(bytes.subarray(20, 24));
    expect(aborted).toBe(1);
  });
});

