import { readFileSync } from "node:fs";
import { afterAll, beforeAll, describe, expect, test } from "vitest";
import { bufferSource } from "@/lib/tiff/byte-source";
import { decodePlane, unpackBits } from "@/lib/tiff/decode";
import { lzwDecode } from "@/lib/tiff/lzw";
import { fileSource } from "@/lib/tiff/file-source";
import { readTiffHeader, readTiffStructure, TiffFormatError } from "@/lib/tiff/structure";
import { countingSource, makeTiffs, readF32le, readU16le, tempDir, tiffcp, TIFFCP_VARIANTS } from "@/tests/helpers/tiff-tools";
import { tinyTiff } from "./tiny-tiff";

const tmp = tempDir("decode");
afterAll(() => tmp.remove());

/** Decodes every plane of a file, each opened by its stored IFD offset. */
async function decodeAll(path: string) {
  const src = await fileSource(path);
  try {
    const structure = await readTiffStructure(src);
    const header = await readTiffHeader(src);
    return await Promise.all(structure.ifds.map((ifd) => decodePlane(src, ifd.offset, { header })));
  } finally {
    await src.close();
  }
}

function concat<T extends Uint8Array | Uint16Array | Float32Array>(planes: { data: T }[], make: (n: number) => T): T {
  const out = make(planes.reduce((n, p) => n + p.data.length, 0));
  let at = 0;
  for (const p of planes) {
    out.set(p.data as never, at);
    at += p.data.length;
  }
  return out;
}

describe("decodePlane returns the values numpy wrote", () => {
  let stack: string;
  let expected: Uint16Array;
  beforeAll(() => {
    makeTiffs("stack", tmp.dir);
    makeTiffs("kinds", tmp.dir);
    stack = tmp.path("stack.ome.tif");
    // Raw values saved by numpy next to the TIFF written by tifffile (tests/fixtures/make_tiffs.py).
    expected = readU16le(tmp.path("stack.planes.u16le"));
  });

  test("decodes tifffile's own OME-TIFF", async () => {
    const planes = await decodeAll(stack);
    expect(planes).toHaveLength(12);
    expect(planes[0]).toMatchObject({ width: 50, height: 37 });
    expect(concat(planes, (n) => new Uint16Array(n))).toEqual(expected);
  });

  test.each(TIFFCP_VARIANTS)("decodes every plane after libtiff's tiffcp writes $name", async ({ name, options }) => {
    const out = tiffcp(stack, tmp.path(`${name.replace(/\W+/g, "_")}.tif`), options);
    const planes = await decodeAll(out);
    expect(planes.every((p) => p.data instanceof Uint16Array && p.width === 50 && p.height === 37)).toBe(true);
    expect(concat(planes, (n) => new Uint16Array(n))).toEqual(expected);
  });

  test.each(["u16-be-predictor.tif", "u16-be-tiles.tif"])("decodes tifffile's big-endian Deflate + predictor file %s", async (file) => {
    const planes = await decodeAll(tmp.path(file));
    expect(concat(planes, (n) => new Uint16Array(n))).toEqual(readU16le(tmp.path("u16.raw")));
  });

  test.each([
    ["LZW", ["-c", "lzw"]],
    ["LZW + predictor", ["-c", "lzw:2"]],
    ["Deflate + predictor", ["-c", "zip:2"]],
    ["PackBits", ["-c", "packbits"]],
  ])("decodes 128 KiB strips that tiffcp wrote with %s (full LZW tables, long runs)", async (name, options) => {
    const out = tiffcp(tmp.path("large.tif"), tmp.path(`large-${name.replace(/\W+/g, "_")}.tif`), ["-r", "256", ...options]);
    expect(concat(await decodeAll(out), (n) => new Uint16Array(n))).toEqual(readU16le(tmp.path("large.raw")));
  });

  test("decodes 8-bit planes as Uint8Array", async () => {
    const planes = await decodeAll(tmp.path("u8.tif"));
    expect(planes[0].data).toBeInstanceOf(Uint8Array);
    expect(concat(planes, (n) => new Uint8Array(n))).toEqual(new Uint8Array(readFileSync(tmp.path("u8.raw"))));
  });

  test("decodes 8-bit planes re-encoded by tiffcp with LZW + predictor", async () => {
    const out = tiffcp(tmp.path("u8.tif"), tmp.path("u8-lzw2.tif"), ["-c", "lzw:2"]);
    expect(concat(await decodeAll(out), (n) => new Uint8Array(n))).toEqual(new Uint8Array(readFileSync(tmp.path("u8.raw"))));
  });

  test("decodes 32-bit float planes, little- and big-endian", async () => {
    const raw = readF32le(tmp.path("f32.raw"));
    const planes = await decodeAll(tmp.path("f32.tif"));
    expect(planes[0].data).toBeInstanceOf(Float32Array);
    expect(concat(planes, (n) => new Float32Array(n))).toEqual(raw);
    const be = tiffcp(tmp.path("f32.tif"), tmp.path("f32-be.tif"), ["-B", "-c", "none"]);
    expect(concat(await decodeAll(be), (n) => new Float32Array(n))).toEqual(raw);
  });

  test("opens the last plane without reading any other plane's IFD", async () => {
    const out = tiffcp(stack, tmp.path("direct.tif"), ["-c", "lzw:2"]);
    const file = await fileSource(out);
    const { ifds } = await readTiffStructure(file);
    const header = await readTiffHeader(file);
    const readsFor = async (k: number) => {
      const counted = countingSource(file);
      await decodePlane(counted.source, ifds[k].offset, { header });
      return counted.reads;
    };
    const first = await readsFor(0);
    const last = await readsFor(ifds.length - 1);
    await file.close();
    const touches = (reads: { offset: number; length: number }[], at: number) => reads.some((r) => r.offset <= at && at < r.offset + r.length);
    for (const ifd of ifds.slice(0, -1)) expect(touches(last, ifd.offset)).toBe(false);
    // Same work for plane 0 and plane 11: the cost does not grow with the position in the file.
    expect(last.length).toBe(first.length);
  });
});

describe("decodePlane errors", () => {
  test("refuses a lossy plane and says why", async () => {
    const bytes = tinyTiff({ compression: 7 });
    await expect(decodePlane(bufferSource(bytes), 8)).rejects.toThrow(/cannot be decoded: JPEG compression is lossy/);
  });

  test("rejects an IFD offset outside the file", async () => {
    const bytes = tinyTiff();
    await expect(decodePlane(bufferSource(bytes), bytes.byteLength + 10)).rejects.toThrow(TiffFormatError);
  });

  test("stops when the signal is aborted", async () => {
    const controller = new AbortController();
    controller.abort(new Error("scrubbed to another plane"));
    await expect(decodePlane(bufferSource(tinyTiff()), 8, { signal: controller.signal })).rejects.toThrow("scrubbed to another plane");
  });

  test("decodes a hand-made uncompressed 8-bit plane", async () => {
    const plane = await decodePlane(bufferSource(tinyTiff({ width: 4, height: 2 })), 8);
    // tinyTiff fills pixel i with 7·i.
    expect(Array.from(plane.data)).toEqual([0, 7, 14, 21, 28, 35, 42, 49]);
  });
});

describe("lzwDecode", () => {
  test("reports a code that is not yet in the table as damaged data", () => {
    // 9-bit codes MSB-first: 65, then 300 while the next free code is 258.
    const bits = [65, 300].map((c) => c.toString(2).padStart(9, "0")).join("").padEnd(24, "0");
    const bytes = Uint8Array.from(bits.match(/.{8}/g) ?? [], (b) => parseInt(b, 2));
    expect(() => lzwDecode(bytes, 10)).toThrow(/LZW code 300 is not yet defined/);
  });
});

describe("unpackBits", () => {
  test("treats header byte −128 as a no-op (TIFF 6.0, Adobe 1992, section 9 — from memory)", () => {
    const packed = new Uint8Array([0x80, 0x01, 5, 6, 0xfe, 9]);
    // −128: skip; 1: copy 2 literal bytes; −2: repeat the next byte 3 times.
    expect(Array.from(new Uint8Array(unpackBits(packed, 5)))).toEqual([5, 6, 9, 9, 9]);
  });
});
