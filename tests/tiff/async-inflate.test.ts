import { readFileSync, writeFileSync } from "node:fs";
import { deflateSync, inflateSync } from "node:zlib";
import { afterAll, describe, expect, test } from "vitest";
import { bufferSource } from "@/lib/tiff/byte-source";
import { BLOCK_WINDOW_BYTES, decodeIfd, type Inflate } from "@/lib/tiff/decode";
import { scanPlanes } from "@/lib/tiff/scan";
import { readTiffStructure, TiffFormatError } from "@/lib/tiff/structure";
import { writeTiff } from "@/lib/tiff/writer";
import { tempDir, tiffcp } from "@/tests/helpers/tiff-tools";
import { collectUnhandledRejections } from "@/tests/helpers/unhandled";

const tmp = tempDir("async-inflate");
afterAll(() => tmp.remove());

const W = 150;
const H = 101;

/** Camera-like 12-bit values: a gradient plus noise, so the predictor and Deflate both have work. */
function plane(k: number): Uint16Array {
  let seed = 12345 + k * 7919;
  return Uint16Array.from({ length: W * H }, (_, i) => {
    seed = (seed * 1103515245 + 12345) >>> 0;
    return (((i % W) * 13 + Math.floor(i / W) * 7 + k * 101) % 3000) + (seed >>> 22);
  });
}
const PLANES = [0, 1, 2, 3].map(plane);

const wait = (ms: number) => new Promise((r) => setTimeout(r, ms));

/** inflateSync made asynchronous, finishing blocks in a shuffled order (later blocks often first). */
function shuffledInflate(): { inflate: Inflate; calls: { expected: number; actual: number }[] } {
  const calls: { expected: number; actual: number }[] = [];
  let n = 0;
  return {
    calls,
    inflate: async (block, expected) => {
      const out = inflateSync(block);
      calls.push({ expected, actual: out.byteLength });
      await wait((7 - (n++ % 7)) % 4);
      return out;
    },
  };
}

async function scanAll(bytes: Uint8Array, inflate: Inflate | undefined, lookahead?: number) {
  const source = bufferSource(bytes);
  const structure = await readTiffStructure(source);
  const out: { index: number; data: Uint16Array }[] = [];
  for await (const { index, plane: p } of scanPlanes(source, structure, structure.ifds, { inflate, lookahead })) out.push({ index, data: p.data as Uint16Array });
  return out;
}

const sync: Inflate = (block) => inflateSync(block);

/** Byte-for-byte equality (vitest's deep equality is very slow on millions of elements). */
const bytesOf = (a: Uint16Array) => Buffer.from(a.buffer, a.byteOffset, a.byteLength);
const same = (a: Uint16Array, b: Uint16Array) => a.length === b.length && bytesOf(a).equals(bytesOf(b));

describe("an asynchronous inflate gives exactly the planes of a synchronous one", () => {
  test.each([
    ["Deflate strips of 3 rows (short last strip)", false],
    ["Deflate + predictor strips of 3 rows (short last strip)", true],
  ])("%s", async (_, predictor) => {
    const bytes = await writeTiff(PLANES, { width: W, height: H, bitsPerSample: 16, rowsPerStrip: 3, compression: "deflate", compress: (b) => deflateSync(b), predictor });
    const { inflate, calls } = shuffledInflate();
    const expected = await scanAll(bytes, sync);
    const got = await scanAll(bytes, inflate, 3);
    expect(got.map((p) => p.index)).toEqual([0, 1, 2, 3]);
    for (let k = 0; k < 4; k++) {
      expect(same(got[k].data, expected[k].data)).toBe(true);
      expect(same(got[k].data, PLANES[k])).toBe(true);
    }
    // The size hint is each strip's decoded size (3 rows, the last one 2 rows).
    expect(calls).toHaveLength(4 * Math.ceil(H / 3));
    for (const c of calls) expect(c.actual).toBe(c.expected);
  });

  test.each([
    ["16×16 tiles, Deflate", ["-t", "-w", "16", "-l", "16", "-c", "zip"]],
    ["16×16 tiles, Deflate + predictor", ["-t", "-w", "16", "-l", "16", "-c", "zip:2"]],
    ["big-endian 32×32 tiles, Deflate + predictor", ["-B", "-t", "-w", "32", "-l", "32", "-c", "zip:2"]],
  ])("%s, written by libtiff's tiffcp", async (name, options) => {
    const plain = tmp.path(`plain-${name.replace(/\W+/g, "_")}.tif`);
    writeFileSync(plain, await writeTiff(PLANES, { width: W, height: H, bitsPerSample: 16 }));
    const bytes = new Uint8Array(readFileSync(tiffcp(plain, tmp.path(`${name.replace(/\W+/g, "_")}.tif`), options)));
    const { inflate, calls } = shuffledInflate();
    const [expected, got, js] = [await scanAll(bytes, sync), await scanAll(bytes, inflate, 2), await scanAll(bytes, undefined)];
    for (let k = 0; k < 4; k++) {
      expect(same(got[k].data, expected[k].data)).toBe(true);
      // Without an inflate the browser's path (geotiff's JavaScript inflate) is used: same values.
      expect(same(js[k].data, expected[k].data)).toBe(true);
      expect(same(got[k].data, PLANES[k])).toBe(true);
    }
    // Tiles are stored whole, padded past the edge: every hint is a whole tile.
    const tile = name.includes("32×32") ? 32 * 32 * 2 : 16 * 16 * 2;
    for (const c of calls) expect(c).toEqual({ expected: tile, actual: tile });
  });
});

describe("the block window", () => {
  test(`keeps at most ${BLOCK_WINDOW_BYTES / 2 ** 20} MiB of decoded blocks in flight, and more than one block`, async () => {
    // One 1024 × 8192 plane in 16 strips of 1 MiB each.
    const big = new Uint16Array(1024 * 8192);
    for (let i = 0; i < big.length; i++) big[i] = i % 4099;
    const bytes = await writeTiff([big], { width: 1024, height: 8192, bitsPerSample: 16, rowsPerStrip: 512, compression: "deflate", compress: (b) => deflateSync(b) });
    const source = bufferSource(bytes);
    const structure = await readTiffStructure(source);
    let inFlight = 0;
    let most = 0;
    const inflate: Inflate = async (block) => {
      inFlight++;
      most = Math.max(most, inFlight);
      await wait(2);
      inFlight--;
      return inflateSync(block);
    };
    const decoded = await decodeIfd(source, structure, structure.ifds[0], undefined, inflate);
    expect(same(decoded.data as Uint16Array, big)).toBe(true);
    expect(most).toBe(BLOCK_WINDOW_BYTES / 2 ** 20);
  });
});

describe("a damaged block", () => {
  const unhandled = collectUnhandledRejections();

  test("fails with the error of the first failing block in reading order, even when a later one fails first", async () => {
    const bytes = await writeTiff([PLANES[0]], { width: W, height: H, bitsPerSample: 16, rowsPerStrip: 3, compression: "deflate", compress: (b) => deflateSync(b) });
    const source = bufferSource(bytes);
    const structure = await readTiffStructure(source);
    let n = 0;
    const started: number[] = [];
    const inflate: Inflate = async (block) => {
      const i = n++;
      started.push(i);
      if (i === 3) {
        await wait(20);
        throw new Error("block three is damaged");
      }
      if (i === 5) throw new Error("block five is damaged");
      await wait(1);
      return inflateSync(block);
    };
    const failure = decodeIfd(source, structure, structure.ifds[0], undefined, inflate);
    await expect(failure).rejects.toThrow(new TiffFormatError("A compressed block could not be decoded: block three is damaged"));
    await wait(30);
    expect(unhandled).toEqual([]);
    // After the first failure no further block was started.
    expect(started.length).toBeLessThan(Math.ceil(H / 3));
  });

  test("a corrupt zlib stream gives the same TiffFormatError with and without the asynchronous inflate", async () => {
    const bytes = await writeTiff(PLANES, { width: W, height: H, bitsPerSample: 16, rowsPerStrip: 3, compression: "deflate", compress: (b) => deflateSync(b), predictor: true });
    const structure = await readTiffStructure(bufferSource(bytes));
    // Strip 4 of plane 2: a zlib header whose check bits are wrong (RFC 1950 section 2.2: FCHECK).
    const at = structure.ifds[1].layout.offsets[4];
    bytes[at] = 0x78;
    bytes[at + 1] = 0x00;
    const errors: unknown[] = [];
    for (const [inflate, lookahead] of [[sync, 1], [shuffledInflate().inflate, 3]] as const) {
      const seen: number[] = [];
      try {
        for await (const { index } of scanPlanes(bufferSource(bytes), structure, structure.ifds, { inflate, lookahead })) seen.push(index);
      } catch (error) {
        errors.push(error);
      }
      expect(seen).toEqual([0]);
    }
    expect(errors).toHaveLength(2);
    expect(errors[0]).toBeInstanceOf(TiffFormatError);
    expect(errors[1]).toBeInstanceOf(TiffFormatError);
    expect((errors[1] as Error).message).toBe((errors[0] as Error).message);
    expect((errors[0] as Error).message).toBe("A compressed block could not be decoded: incorrect header check");
    await wait(30);
    expect(unhandled).toEqual([]);
  });
});
