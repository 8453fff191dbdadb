import { readFileSync, writeFileSync } from "node:fs";
import { deflateSync, inflateSync } from "node:zlib";
import { afterAll, describe, expect, test } from "vitest";
import { histogram16 } from "@/lib/imaging/histogram";
import { summariseForCeilings } from "@/lib/imaging/summary";
import { checkPlanes, IngestError, ingestPlanes } from "@/lib/server/ingest";
import { inflateOffThread } from "@/lib/server/native-inflate";
import { bufferSource } from "@/lib/tiff/byte-source";
import { scanPlanes } from "@/lib/tiff/scan";
import { readTiffStructure } from "@/lib/tiff/structure";
import { writeTiff } from "@/lib/tiff/writer";
import { buildTiff } from "@/tests/tiff/fuzz-seeds";
import { tempDir, tiffcp } from "@/tests/helpers/tiff-tools";
import { collectUnhandledRejections } from "@/tests/helpers/unhandled";

const tmp = tempDir("ingest-scan");
afterAll(() => tmp.remove());

const W = 301;
const H = 64;
/** Camera-like values (a gradient plus noise, up to 14 bits), a different pattern per plane. */
function plane(k: number): Uint16Array {
  let seed = 99 + k * 31337;
  return Uint16Array.from({ length: W * H }, (_, i) => {
    seed = (seed * 1664525 + 1013904223) >>> 0;
    return (((i % W) * 29 + Math.floor(i / W) * 3 + k * 577) % 12000) + (seed >>> 21);
  });
}
const PLANES = Array.from({ length: 5 }, (_, k) => plane(k));
// The ingest's candidate ceilings when the file states no SignificantBits (lib/server/ingest.ts).
const CEILINGS = [8, 10, 12, 14, 16].map((b) => 2 ** b - 1);

const bytesOf = (a: ArrayBufferView) => Buffer.from(a.buffer, a.byteOffset, a.byteLength);

/** Planes and their statistics, as the ingest computes them, in the order they were handed over. */
async function collect(planes: AsyncIterable<{ index: number; plane: { data: ArrayBufferView } }>) {
  const out: { index: number; bytes: Buffer; stats: ReturnType<typeof summariseForCeilings> }[] = [];
  for await (const { index, plane: p } of planes) {
    out.push({ index, bytes: Buffer.from(bytesOf(p.data)), stats: summariseForCeilings(histogram16(p.data as Uint16Array), CEILINGS) });
  }
  return out;
}

async function variants(): Promise<[string, Uint8Array][]> {
  const write = (predictor: boolean) => writeTiff(PLANES, { width: W, height: H, bitsPerSample: 16, rowsPerStrip: 5, compression: "deflate", compress: (b) => deflateSync(b), predictor });
  const plain = tmp.path("plain.tif");
  writeFileSync(plain, await writeTiff(PLANES, { width: W, height: H, bitsPerSample: 16 }));
  const cp = (name: string, options: string[]) => new Uint8Array(readFileSync(tiffcp(plain, tmp.path(`${name}.tif`), options)));
  return [
    ["Deflate strips", await write(false)],
    ["Deflate + predictor strips", await write(true)],
    ["Deflate 32×32 tiles (tiffcp)", cp("tiles", ["-t", "-w", "32", "-l", "32", "-c", "zip"])],
    ["Deflate + predictor 16×16 tiles, big-endian BigTIFF (tiffcp)", cp("tiles-be", ["-B", "-8", "-t", "-w", "16", "-l", "16", "-c", "zip:2"])],
  ];
}

describe("ingestPlanes: inflate on the thread pool, planes decoding ahead", () => {
  test("gives byte-identical planes and identical statistics to the one-core scan, in the same order", async () => {
    for (const [name, bytes] of await variants()) {
      const source = bufferSource(bytes);
      const structure = await readTiffStructure(source);
      const oneCore = await collect(scanPlanes(source, structure, structure.ifds, { inflate: (b) => inflateSync(b) }));
      const parallel = await collect(ingestPlanes(source, structure, structure.ifds));
      expect(parallel.map((p) => p.index), name).toEqual([0, 1, 2, 3, 4]);
      for (let k = 0; k < PLANES.length; k++) {
        expect(parallel[k].bytes.equals(oneCore[k].bytes), `${name}, plane ${k}`).toBe(true);
        expect(parallel[k].bytes.equals(bytesOf(PLANES[k])), `${name}, plane ${k} as written`).toBe(true);
        expect(parallel[k].stats, `${name}, plane ${k}`).toEqual(oneCore[k].stats);
      }
    }
  });

  test("inflateOffThread returns what inflateSync returns, and rejects what it throws on", async () => {
    const raw = bytesOf(PLANES[0]);
    const packed = deflateSync(raw);
    expect(Buffer.from(await inflateOffThread(packed, raw.byteLength)).equals(inflateSync(packed))).toBe(true);
    // A hint far too small or too large changes nothing but the number of trips to the pool.
    expect(Buffer.from(await inflateOffThread(packed, 10)).equals(raw)).toBe(true);
    expect(Buffer.from(await inflateOffThread(packed, 64 * 2 ** 20)).equals(raw)).toBe(true);
    const damaged = Uint8Array.from(packed);
    damaged[1] ^= 0xff;
    expect(() => inflateSync(damaged)).toThrow("incorrect header check");
    await expect(inflateOffThread(damaged, raw.byteLength)).rejects.toThrow("incorrect header check");
  });
});

describe("a corrupt Deflate block at ingest", () => {
  const unhandled = collectUnhandledRejections();

  test("fails with an IngestError naming the plane and zlib's reason, the one-core scan's message, and no unhandled rejection", async () => {
    const bytes = await writeTiff(PLANES, { width: W, height: H, bitsPerSample: 16, rowsPerStrip: 5, compression: "deflate", compress: (b) => deflateSync(b), predictor: true });
    const structure = await readTiffStructure(bufferSource(bytes));
    // The middle of strip 6 of plane 3 overwritten: the Deflate data no longer decodes.
    const { offsets, byteCounts } = structure.ifds[2].layout;
    bytes.fill(0xff, offsets[6] + 2, offsets[6] + byteCounts[6] - 4);

    let oneCoreMessage = "";
    try {
      for await (const step of scanPlanes(bufferSource(bytes), structure, structure.ifds, { inflate: (b) => inflateSync(b) })) void step;
    } catch (error) {
      oneCoreMessage = (error as Error).message;
    }
    expect(oneCoreMessage).toMatch(/^A compressed block could not be decoded: /);

    const seen: number[] = [];
    let failure: unknown;
    try {
      for await (const { index } of ingestPlanes(bufferSource(bytes), structure, structure.ifds)) seen.push(index);
    } catch (error) {
      failure = error;
    }
    expect(seen).toEqual([0, 1]);
    expect(failure).toBeInstanceOf(IngestError);
    expect((failure as Error).message).toBe(`Plane 3: ${oneCoreMessage}`);
    // Planes 4 and 5 were decoding ahead when plane 3 failed; nothing of theirs may surface later.
    await new Promise((r) => setTimeout(r, 100));
    expect(unhandled).toEqual([]);
  });
});

describe("checkPlanes", () => {
  test("refuses 32-bit float planes, saying they are not summarised and what to convert to", async () => {
    const f32 = [0, 1].map((k) => Float32Array.from({ length: 16 * 8 }, (_, i) => i * 0.5 + k));
    const built = buildTiff({ width: 16, height: 8, bits: 32, planes: f32.map((data) => ({ data })) });
    const structure = await readTiffStructure(bufferSource(built.bytes));
    expect(structure.ifds[0].sampleFormat[0]).toBe(3);
    expect(() => checkPlanes(structure.ifds, built.bytes.byteLength)).toThrow(
      new IngestError("32-bit float planes are read by the decoder but not yet summarised; convert to 16-bit integers."),
    );
  });

  test("accepts the same stack as 16-bit integers", async () => {
    const u16 = [0, 1].map((k) => Uint16Array.from({ length: 16 * 8 }, (_, i) => i + k));
    const built = buildTiff({ width: 16, height: 8, bits: 16, planes: u16.map((data) => ({ data })) });
    const structure = await readTiffStructure(bufferSource(built.bytes));
    expect(() => checkPlanes(structure.ifds, built.bytes.byteLength)).not.toThrow();
  });
});
