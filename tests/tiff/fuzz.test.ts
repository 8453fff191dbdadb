// Property-based fuzzing of the TIFF structure reader, the plane decoder, the codecs and the OME-XML
// parser. Every property runs with a fixed seed so a failure reproduces; fast-check prints the seed
// and the shrunk counterexample path. FUZZ_SEED / FUZZ_SCALE widen the search when run by hand.
import { writeFileSync, readFileSync } from "node:fs";
import fc from "fast-check";
import { afterAll, beforeAll, describe, expect, test } from "vitest";
import { bufferSource, type ByteSource } from "@/lib/tiff/byte-source";
import { decodePlane, MAX_PLANE_PIXELS, unpackBits } from "@/lib/tiff/decode";
import { lzwDecode } from "@/lib/tiff/lzw";
import { DIMENSION_ORDERS, OmeXmlError, parseOmeXml } from "@/lib/tiff/ome";
import { readTiffStructure, TiffFormatError, type TiffStructure } from "@/lib/tiff/structure";
import { countingSource, tempDir, tiffcp } from "@/tests/helpers/tiff-tools";
import { buildTiff, pattern } from "./fuzz-seeds";
import { tinyTiff } from "./tiny-tiff";

const SEED = Number(process.env.FUZZ_SEED ?? 0x5eed_f1f);
const SCALE = Number(process.env.FUZZ_SCALE ?? 1);
const runs = (n: number) => Math.max(1, Math.round(n * SCALE));
const CALL_BUDGET_MS = 2000;

const tmp = tempDir("fuzz");
afterAll(() => tmp.remove());

// ---------------------------------------------------------------------------------------------
// Seeds: small valid files covering byte order, BigTIFF, strips/tiles and every lossless codec.

interface Seed {
  name: string;
  bytes: Uint8Array;
  littleEndian: boolean;
  bigTiff: boolean;
  ifds: { offset: number; entries: number }[];
  /** Header, IFD and tag-array bytes: where a flipped byte changes the structure, not a pixel. */
  hot: number[];
  /** Expected pixels of each plane. */
  planes: ArrayLike<number>[];
  structure: TiffStructure;
}

const W = 20;
const H = 12;
const seeds: Seed[] = [];

const TYPE_SIZE: Record<number, number> = { 1: 1, 2: 1, 3: 2, 4: 4, 5: 8, 6: 1, 7: 1, 8: 2, 9: 4, 10: 8, 11: 4, 12: 8, 13: 4, 16: 8, 17: 8, 18: 8 };

/** Indexes a valid seed: IFD positions, entry counts and the byte positions worth mutating. */
function describeSeed(name: string, bytes: Uint8Array, structure: TiffStructure, planes: ArrayLike<number>[]): Seed {
  const { littleEndian: le, bigTiff: big } = structure;
  const v = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const hot = new Set<number>();
  for (let i = 0; i < (big ? 16 : 8); i++) hot.add(i);
  const ifds = structure.ifds.map((ifd) => {
    const entries = big ? Number(v.getBigUint64(ifd.offset, le)) : v.getUint16(ifd.offset, le);
    const entrySize = big ? 20 : 12;
    const start = ifd.offset + (big ? 8 : 2);
    for (let i = ifd.offset; i < start + entries * entrySize + (big ? 8 : 4); i++) hot.add(i);
    for (let k = 0; k < entries; k++) {
      const at = start + k * entrySize;
      const type = v.getUint16(at + 2, le);
      const count = big ? Number(v.getBigUint64(at + 4, le)) : v.getUint32(at + 4, le);
      if ((TYPE_SIZE[type] ?? 0) * count > (big ? 8 : 4)) {
        const off = big ? Number(v.getBigUint64(at + 12, le)) : v.getUint32(at + 8, le);
        for (let i = off; i < Math.min(off + TYPE_SIZE[type] * count, off + 64); i++) hot.add(i);
      }
    }
    return { offset: ifd.offset, entries };
  });
  return { name, bytes, littleEndian: le, bigTiff: big, ifds, hot: [...hot].sort((a, b) => a - b), planes, structure };
}

beforeAll(async () => {
  const u16 = [0, 1].map((p) => pattern(W, H, 16, p));
  const u8 = [0, 1].map((p) => pattern(W, H, 8, p));
  const f32 = [pattern(W, H, 32, 0)];
  const hand: { name: string; built: ReturnType<typeof buildTiff>; planes: ArrayLike<number>[] }[] = [
    { name: "II classic 16-bit, 5-row strips", planes: u16, built: buildTiff({ width: W, height: H, bits: 16, planes: u16.map((data) => ({ data })), rowsPerStrip: 5, description: "fuzz seed" }) },
    { name: "MM classic 8-bit, IFD before strips", planes: u8, built: buildTiff({ width: W, height: H, bits: 8, planes: u8.map((data) => ({ data })), littleEndian: false, ifdFirst: true, rowsPerStrip: 4 }) },
    { name: "II BigTIFF 16-bit", planes: u16, built: buildTiff({ width: W, height: H, bits: 16, planes: u16.map((data) => ({ data })), bigTiff: true, rowsPerStrip: 3 }) },
    { name: "MM BigTIFF 32-bit float", planes: f32, built: buildTiff({ width: W, height: H, bits: 32, planes: f32.map((data) => ({ data })), bigTiff: true, littleEndian: false }) },
  ];
  for (const h of hand) seeds.push(describeSeed(h.name, h.built.bytes, await readTiffStructure(bufferSource(h.built.bytes)), h.planes));

  // libtiff re-encodes the hand-made files with each codec and tile layout.
  writeFileSync(tmp.path("u16.tif"), hand[0].built.bytes);
  writeFileSync(tmp.path("u8.tif"), hand[1].built.bytes);
  const variants: [string, "u16.tif" | "u8.tif", string[]][] = [
    ["LZW + predictor", "u16.tif", ["-c", "lzw:2"]],
    ["big-endian Deflate + predictor", "u16.tif", ["-B", "-c", "zip:2"]],
    ["PackBits, 3-row strips", "u16.tif", ["-r", "3", "-c", "packbits"]],
    ["16×16 tiles, LZW", "u16.tif", ["-t", "-w", "16", "-l", "16", "-c", "lzw"]],
    ["big-endian BigTIFF 16×16 tiles, Deflate + predictor", "u16.tif", ["-B", "-8", "-t", "-w", "16", "-l", "16", "-c", "zip:2"]],
    ["8-bit LZW + predictor", "u8.tif", ["-c", "lzw:2"]],
    ["8-bit PackBits tiles", "u8.tif", ["-t", "-w", "16", "-l", "16", "-c", "packbits"]],
  ];
  for (const [name, input, options] of variants) {
    const out = tiffcp(tmp.path(input), tmp.path(`${name.replace(/\W+/g, "_")}.tif`), options);
    const bytes = new Uint8Array(readFileSync(out));
    seeds.push(describeSeed(name, bytes, await readTiffStructure(bufferSource(bytes)), input === "u16.tif" ? u16 : u8));
  }
});

// ---------------------------------------------------------------------------------------------
// Mutations.

type Pos = { hot: boolean; n: number };
type Val = { k: "num"; n: bigint } | { k: "self" } | { k: "ifd"; i: number } | { k: "size"; d: number };
type Op =
  | { kind: "flip"; at: Pos; bit: number }
  | { kind: "overwrite"; at: Pos; values: number[] }
  | { kind: "truncate"; at: Pos }
  | { kind: "splice"; from: Pos; len: number; to: Pos; insert: boolean }
  | { kind: "entry"; ifd: number; entry: number; field: "tag" | "type" | "count" | "value"; value: Val }
  | { kind: "link"; from: number; to: Val };

const BOUNDARY = [0n, 1n, 2n, 8n, 0x7fn, 0x80n, 0xffn, 0xffffn, 0x10000n, 0x7fffffffn, 0x80000000n, 0xffffffffn, 0x100000000n, 2n ** 53n, 2n ** 63n, 2n ** 64n - 1n];
const TAGS = [254, 256, 257, 258, 259, 262, 270, 273, 277, 278, 279, 284, 317, 322, 323, 324, 325, 339];

const posArb: fc.Arbitrary<Pos> = fc.record({ hot: fc.boolean(), n: fc.nat() });
const valArb: fc.Arbitrary<Val> = fc.oneof(
  fc.constantFrom(...BOUNDARY).map((n): Val => ({ k: "num", n })),
  fc.bigInt({ min: 0n, max: 0xffffffffn }).map((n): Val => ({ k: "num", n })),
  fc.constant<Val>({ k: "self" }),
  fc.nat({ max: 3 }).map((i): Val => ({ k: "ifd", i })),
  fc.integer({ min: -1, max: 1 }).map((d): Val => ({ k: "size", d })),
);
const byteArb = fc.oneof(fc.constantFrom(0x00, 0xff, 0x7f, 0x80), fc.integer({ min: 0, max: 255 }));
const opArb: fc.Arbitrary<Op> = fc.oneof(
  fc.record({ kind: fc.constant("flip" as const), at: posArb, bit: fc.integer({ min: 0, max: 7 }) }),
  fc.record({ kind: fc.constant("overwrite" as const), at: posArb, values: fc.array(byteArb, { minLength: 1, maxLength: 8 }) }),
  fc.record({ kind: fc.constant("truncate" as const), at: posArb }),
  fc.record({ kind: fc.constant("splice" as const), from: posArb, len: fc.integer({ min: 1, max: 64 }), to: posArb, insert: fc.boolean() }),
  fc.record({
    kind: fc.constant("entry" as const),
    ifd: fc.nat(),
    entry: fc.nat(),
    field: fc.constantFrom("tag" as const, "type" as const, "count" as const, "value" as const),
    value: fc.oneof(valArb, fc.constantFrom(...TAGS).map((t): Val => ({ k: "num", n: BigInt(t) })), fc.integer({ min: 0, max: 20 }).map((t): Val => ({ k: "num", n: BigInt(t) }))),
  }),
  fc.record({ kind: fc.constant("link" as const), from: fc.nat(), to: valArb }),
);
const mutationArb = (maxOps: number) => fc.record({ seed: fc.nat(), ops: fc.array(opArb, { minLength: 1, maxLength: maxOps }) });

/** Writes `value` as an unsigned `width`-byte integer in the seed's byte order; bytes past the end are dropped. */
function put(buf: Uint8Array, at: number, width: number, value: bigint, le: boolean): void {
  const v = BigInt.asUintN(width * 8, value);
  for (let i = 0; i < width; i++) {
    const shift = BigInt(8 * (le ? i : width - 1 - i));
    if (at + i >= 0 && at + i < buf.length) buf[at + i] = Number((v >> shift) & 0xffn);
  }
}

function mutate(seed: Seed, ops: Op[]): Uint8Array {
  let buf = seed.bytes.slice();
  const le = seed.littleEndian;
  const big = seed.bigTiff;
  const pos = (p: Pos) => (p.hot ? seed.hot[p.n % seed.hot.length] : p.n % Math.max(buf.length, 1));
  const value = (val: Val, self: number): bigint =>
    val.k === "num" ? val.n : val.k === "self" ? BigInt(self) : val.k === "ifd" ? BigInt(seed.ifds[val.i % seed.ifds.length].offset) : BigInt(Math.max(0, buf.length + val.d));
  for (const op of ops) {
    switch (op.kind) {
      case "flip": {
        const at = pos(op.at);
        if (at < buf.length) buf[at] ^= 1 << op.bit;
        break;
      }
      case "overwrite": {
        const at = pos(op.at);
        op.values.forEach((b, i) => {
          if (at + i < buf.length) buf[at + i] = b;
        });
        break;
      }
      case "truncate":
        buf = buf.slice(0, pos(op.at));
        break;
      case "splice": {
        const from = pos(op.from);
        const piece = buf.slice(from, from + op.len);
        const to = Math.min(pos(op.to), buf.length);
        if (op.insert) {
          const out = new Uint8Array(buf.length + piece.length);
          out.set(buf.subarray(0, to));
          out.set(piece, to);
          out.set(buf.subarray(to), to + piece.length);
          buf = out;
        } else {
          buf.set(piece.subarray(0, Math.max(0, buf.length - to)), to);
        }
        break;
      }
      case "entry": {
        const ifd = seed.ifds[op.ifd % seed.ifds.length];
        const at = ifd.offset + (big ? 8 : 2) + (op.entry % ifd.entries) * (big ? 20 : 12);
        const [offset, width] =
          op.field === "tag" ? [0, 2] : op.field === "type" ? [2, 2] : op.field === "count" ? [4, big ? 8 : 4] : [big ? 12 : 8, big ? 8 : 4];
        put(buf, at + offset, width, value(op.value, at + offset), le);
        break;
      }
      case "link": {
        // from = number of IFDs means the header's first-IFD offset; otherwise IFD k's next-IFD offset.
        const k = op.from % (seed.ifds.length + 1);
        const at =
          k === seed.ifds.length
            ? big ? 8 : 4
            : seed.ifds[k].offset + (big ? 8 : 2) + seed.ifds[k].entries * (big ? 20 : 12);
        put(buf, at, big ? 8 : 4, value(op.to, at), le);
        break;
      }
    }
  }
  return buf;
}

// ---------------------------------------------------------------------------------------------
// Guards: a call that does not settle, or keeps reading, is a hang.

class HangSuspected extends Error {
  override name = "HangSuspected";
}

/** A buffer source that fails the call once it has read 20,000 times or run for the call budget. */
function guardedSource(bytes: Uint8Array): ByteSource {
  const inner = bufferSource(bytes);
  const start = performance.now();
  let reads = 0;
  return {
    size: inner.size,
    read(offset, length, signal) {
      reads++;
      if (reads > 20_000) return Promise.reject(new HangSuspected(`${reads} reads of a ${inner.size}-byte file`));
      if (performance.now() - start > CALL_BUDGET_MS) return Promise.reject(new HangSuspected(`still reading after ${CALL_BUDGET_MS} ms`));
      return inner.read(offset, length, signal);
    },
  };
}

async function settle<T>(work: () => Promise<T>): Promise<{ ok: true; value: T } | { ok: false; error: unknown }> {
  let timer: ReturnType<typeof setTimeout> | undefined;
  const timeout = new Promise<never>((_, reject) => {
    timer = setTimeout(() => reject(new HangSuspected(`did not settle within ${CALL_BUDGET_MS} ms`)), CALL_BUDGET_MS);
  });
  try {
    return { ok: true, value: await Promise.race([work(), timeout]) };
  } catch (error) {
    return { ok: false, error };
  } finally {
    clearTimeout(timer);
  }
}

/** Rethrows anything but a TiffFormatError, so fast-check reports the input that caused it. */
function expectFormatError(error: unknown, what: string): void {
  if (error instanceof TiffFormatError) return;
  const e = error instanceof Error ? error : new Error(String(error));
  throw new Error(`${what} failed with ${e.name}, not TiffFormatError: ${e.message}`, { cause: e });
}

function checkStructure(s: TiffStructure): void {
  expect(s.ifds.length).toBeGreaterThan(0);
  for (const ifd of s.ifds) {
    for (const n of [ifd.width, ifd.height]) expect(Number.isSafeInteger(n) && n >= 1, `image size ${ifd.width} × ${ifd.height}`).toBe(true);
    expect(ifd.offset).toBeLessThan(s.fileSize);
    ifd.layout.offsets.forEach((off, i) => {
      const count = ifd.layout.byteCounts[i];
      expect(Number.isSafeInteger(off) && off >= 0 && Number.isSafeInteger(count) && count >= 0, `block ${off}+${count}`).toBe(true);
      expect(off + count).toBeLessThanOrEqual(s.fileSize);
    });
  }
}

const fuzzOptions = (numRuns: number) => ({ numRuns, seed: SEED });

// ---------------------------------------------------------------------------------------------

describe("fuzz seeds", () => {
  test("every seed parses and decodes to the values it was written with", async () => {
    expect(seeds.length).toBe(11);
    for (const seed of seeds) {
      const s = await readTiffStructure(bufferSource(seed.bytes));
      expect(s.ifds.length, seed.name).toBe(seed.planes.length);
      for (const [k, ifd] of s.ifds.entries()) {
        const plane = await decodePlane(bufferSource(seed.bytes), ifd.offset);
        expect(Array.from(plane.data), seed.name).toEqual(Array.from(seed.planes[k]));
      }
    }
    // The seeds cover both byte orders, both TIFF versions, strips and tiles, and four codecs.
    const all = await Promise.all(seeds.map((s) => readTiffStructure(bufferSource(s.bytes))));
    expect(new Set(all.map((s) => `${s.littleEndian}/${s.bigTiff}`)).size).toBe(4);
    expect(new Set(all.map((s) => s.ifds[0].layout.kind))).toEqual(new Set(["strips", "tiles"]));
    expect(new Set(all.map((s) => s.ifds[0].compression))).toEqual(new Set([1, 5, 8, 32773]));
  });
});

describe("readTiffStructure on mutated files", () => {
  test("resolves with a sane structure or rejects with TiffFormatError, within the time budget", async () => {
    let parsed = 0;
    await fc.assert(
      fc.asyncProperty(mutationArb(4), async ({ seed, ops }) => {
        const bytes = mutate(seeds[seed % seeds.length], ops);
        const r = await settle(() => readTiffStructure(guardedSource(bytes), { descriptions: "all" }));
        if (!r.ok) return expectFormatError(r.error, "readTiffStructure");
        parsed++;
        checkStructure(r.value);
      }),
      fuzzOptions(runs(8000)),
    );
    // Evidence the mutations are not all rejected at the header: a good share still parses.
    expect(parsed).toBeGreaterThan(runs(8000) / 20);
  }, 60_000);

  test("stops at IFD chains that loop, through any IFD, on every seed", async () => {
    for (const seed of seeds) {
      for (let from = 0; from < seed.ifds.length; from++) {
        for (let to = 0; to <= from; to++) {
          const bytes = mutate(seed, [{ kind: "link", from, to: { k: "ifd", i: to } }]);
          const r = await settle(() => readTiffStructure(guardedSource(bytes)));
          expect(r.ok, `${seed.name}: IFD ${from} → IFD ${to}`).toBe(false);
          if (!r.ok) expect((r.error as Error).message, seed.name).toMatch(/loops/);
        }
      }
    }
  });
});

describe("decodePlane on mutated files", () => {
  test("returns exactly width × height values or rejects with TiffFormatError, within the time budget", async () => {
    let decoded = 0;
    await fc.assert(
      fc.asyncProperty(mutationArb(2), async ({ seed, ops }) => {
        const bytes = mutate(seeds[seed % seeds.length], ops);
        const s = await settle(() => readTiffStructure(guardedSource(bytes)));
        if (!s.ok) return expectFormatError(s.error, "readTiffStructure");
        for (const ifd of s.value.ifds.slice(0, 4)) {
          const r = await settle(() => decodePlane(guardedSource(bytes), ifd.offset));
          if (!r.ok) {
            expectFormatError(r.error, `decodePlane at ${ifd.offset}`);
            continue;
          }
          decoded++;
          const { width, height, data } = r.value;
          expect([width, height]).toEqual([ifd.width, ifd.height]);
          expect(data.length).toBe(width * height);
          expect(width * height).toBeLessThanOrEqual(MAX_PLANE_PIXELS);
        }
      }),
      fuzzOptions(runs(5000)),
    );
    expect(decoded).toBeGreaterThan(runs(5000) / 8);
  }, 60_000);
});

/** A one-plane 4 × 2 little-endian file with some entries' type, count or value replaced. */
function patched(o: { bigTiff?: boolean; description?: string }, patches: { tag: number; type?: number; count?: number; value?: bigint }[]) {
  const big = o.bigTiff ?? false;
  const built = buildTiff({ width: 4, height: 2, bits: 16, planes: [{ data: new Uint16Array(8) }], bigTiff: big, description: o.description });
  const { bytes } = built;
  const v = new DataView(bytes.buffer);
  const ifd = built.ifdOffsets[0];
  const entries = big ? Number(v.getBigUint64(ifd, true)) : v.getUint16(ifd, true);
  for (let k = 0; k < entries; k++) {
    const at = ifd + (big ? 8 : 2) + k * (big ? 20 : 12);
    const p = patches.find((x) => x.tag === v.getUint16(at, true));
    if (!p) continue;
    if (p.type !== undefined) put(bytes, at + 2, 2, BigInt(p.type), true);
    if (p.count !== undefined) put(bytes, at + 4, big ? 8 : 4, BigInt(p.count), true);
    if (p.value !== undefined) put(bytes, at + (big ? 12 : 8), big ? 8 : 4, p.value, true);
  }
  return { bytes, ifd };
}

const floatBits = (x: number) => BigInt(new Uint32Array(new Float32Array([x]).buffer)[0]);

describe("limits on values read from the file", () => {
  test("refuses a 65535 × 65535 plane with an unwritten strip before allocating it", async () => {
    // Three header values would otherwise make the decoder allocate 8 GiB of zeros.
    const { bytes, ifd } = patched({}, [
      { tag: 256, value: 65535n },
      { tag: 257, value: 65535n },
      { tag: 278, value: 65535n },
      { tag: 279, value: 0n },
    ]);
    expect((await readTiffStructure(bufferSource(bytes))).ifds[0]).toMatchObject({ width: 65535, height: 65535 });
    await expect(decodePlane(bufferSource(bytes), ifd)).rejects.toThrow(/planes and blocks above \d+ pixels are not decoded/);
  });

  test("refuses 65536 × 65536 LZW tiles on a 4 × 2 image before allocating a tile", async () => {
    // tinyTiff puts the pixels right after an IFD of 13 entries.
    const dataOffset = 8 + 2 + 13 * 12 + 4;
    const bytes = tinyTiff({
      compression: 5,
      extra: [
        { tag: 322, type: 4, count: 1, value: 65536 },
        { tag: 323, type: 4, count: 1, value: 65536 },
        { tag: 324, type: 4, count: 1, value: dataOffset },
        { tag: 325, type: 4, count: 1, value: 8 },
      ],
    });
    expect((await readTiffStructure(bufferSource(bytes))).ifds[0].layout).toMatchObject({ kind: "tiles", tileWidth: 65536, offsets: [dataOffset] });
    await expect(decodePlane(bufferSource(bytes), 8)).rejects.toThrow(/planes and blocks above \d+ pixels are not decoded/);
  });

  test.each([
    ["an image width stored as a 2.5 float", {}, [{ tag: 256, type: 11, value: floatBits(2.5) }]],
    ["a negative strip offset (signed type)", {}, [{ tag: 273, type: 9, value: 0xffff_ff00n }]],
    ["a BigTIFF width of 2^60 (signed 64-bit type)", { bigTiff: true }, [{ tag: 256, type: 17, value: 2n ** 60n }]],
    ["an ImageDescription of unknown field type", { description: "a description" }, [{ tag: 270, type: 0 }]],
  ] as const)("rejects %s with TiffFormatError", async (_, options, patches) => {
    const { bytes } = patched(options, [...patches]);
    await expect(readTiffStructure(bufferSource(bytes))).rejects.toThrow(TiffFormatError);
  });
});

describe("codecs on random and damaged input", () => {
  test("lzwDecode never writes past the expected length and fails only with TiffFormatError", () => {
    // Real LZW strips from the seeds, damaged, reach far deeper into the decoder than random bytes.
    const strips = lzwStrips();
    fc.assert(
      fc.property(
        fc.oneof(
          fc.uint8Array({ maxLength: 2048 }),
          fc.record({ strip: fc.nat(), ops: fc.array(fc.tuple(fc.nat(), byteArb), { minLength: 1, maxLength: 8 }) }).map(({ strip, ops }) => {
            const s = strips[strip % strips.length].slice();
            for (const [at, b] of ops) s[at % s.length] = b;
            return s;
          }),
        ),
        fc.nat({ max: 16384 }),
        (input, expected) => {
          const started = performance.now();
          try {
            const out = lzwDecode(input, expected);
            expect(out.length).toBeLessThanOrEqual(expected);
          } catch (error) {
            expectFormatError(error, "lzwDecode");
          }
          expect(performance.now() - started).toBeLessThan(CALL_BUDGET_MS);
        },
      ),
      fuzzOptions(runs(3000)),
    );
  });

  test("unpackBits never writes past the expected length", () => {
    fc.assert(
      fc.property(fc.uint8Array({ maxLength: 2048 }), fc.nat({ max: 16384 }), (input, expected) => {
        const out = unpackBits(input, expected);
        expect(out.byteLength).toBeLessThanOrEqual(expected);
      }),
      fuzzOptions(runs(3000)),
    );
  });
});

/** The LZW-compressed strips and tiles of the LZW seeds, as stored. */
function lzwStrips(): Uint8Array[] {
  const out: Uint8Array[] = [];
  for (const seed of seeds) {
    if (seed.structure.ifds[0].compression !== 5) continue;
    for (const ifd of seed.structure.ifds) ifd.layout.offsets.forEach((off, i) => out.push(seed.bytes.slice(off, off + ifd.layout.byteCounts[i])));
  }
  expect(out.length).toBeGreaterThan(4);
  return out;
}

// ---------------------------------------------------------------------------------------------
// OME-XML.

function omeDoc(sizes: { x: number; y: number; z: number; c: number; t: number }, order: string): string {
  const channels = Array.from({ length: sizes.c }, (_, c) => `<Channel ID="Channel:0:${c}" Name="ch${c}" Color="${-16776961 + c}" EmissionWavelength="${500 + c * 50}" EmissionWavelengthUnit="nm"/>`).join("");
  return (
    `<?xml version="1.0" encoding="UTF-8"?><OME xmlns="http://www.openmicroscopy.org/Schemas/OME/2016-06"><Image ID="Image:0" Name="fuzz">` +
    `<Pixels ID="Pixels:0" DimensionOrder="${order}" Type="uint16" SignificantBits="12" SizeX="${sizes.x}" SizeY="${sizes.y}" SizeZ="${sizes.z}" SizeC="${sizes.c}" SizeT="${sizes.t}" PhysicalSizeX="0.65" PhysicalSizeXUnit="µm" PhysicalSizeZ="2" PhysicalSizeZUnit="nm" TimeIncrement="5" TimeIncrementUnit="ms">` +
    `${channels}<TiffData IFD="0" PlaneCount="${sizes.z * sizes.c * sizes.t}"/><Plane TheC="0" TheZ="0" TheT="0" DeltaT="0.5"/></Pixels></Image></OME>`
  );
}

const FRAGMENTS = ["<", ">", "/>", '"', "'", "&", "&amp;", "&#0;", "&#xD800;", "<Image>", "</Image>", "<Pixels>", "</Pixels>", "<Channel/>", "<Plane/>", "<TiffData/>", " SizeX=\"-1\"", " SizeZ=\"1e400\"", " Color=\"NaN\"", " IFD=\"0.5\"", " TheC=\"\"", "<!--", "-->", "<![CDATA[", "]]>", "\u0000", "µ", "<?xml?>", "<ome:OME>", "xmlns:ome=\"x\"", " __proto__=\"1\"", " constructor=\"x\""];
const WEIRD_VALUES = ["", " ", "-1", "0", "1.5", "1e400", "NaN", "Infinity", "0x10", "9007199254740993", "XYZCT", "XYZ", "µm", "pixel", "\u0000", "&lt;", "-2147483648", "4294967296"];

const omeArb = fc.oneof(
  fc.string({ unit: "binary", maxLength: 300 }),
  fc.string({ unit: "binary", maxLength: 200 }).map((s) => `<OME>${s}</OME>`),
  fc.record({
    sizes: fc.record({ x: fc.integer({ min: 1, max: 9 }), y: fc.integer({ min: 1, max: 9 }), z: fc.integer({ min: 1, max: 4 }), c: fc.integer({ min: 1, max: 4 }), t: fc.integer({ min: 1, max: 4 }) }),
    order: fc.constantFrom(...DIMENSION_ORDERS),
    ops: fc.array(
      fc.oneof(
        fc.record({ kind: fc.constant("delete" as const), at: fc.nat(), len: fc.integer({ min: 1, max: 40 }) }),
        fc.record({ kind: fc.constant("insert" as const), at: fc.nat(), text: fc.oneof(fc.constantFrom(...FRAGMENTS), fc.string({ unit: "binary", maxLength: 8 })) }),
        fc.record({ kind: fc.constant("value" as const), which: fc.nat(), text: fc.constantFrom(...WEIRD_VALUES) }),
      ),
      { maxLength: 4 },
    ),
  }).map(({ sizes, order, ops }) => {
    let s = omeDoc(sizes, order);
    for (const op of ops) {
      if (op.kind === "delete") {
        const at = op.at % s.length;
        s = s.slice(0, at) + s.slice(at + op.len);
      } else if (op.kind === "insert") {
        const at = op.at % (s.length + 1);
        s = s.slice(0, at) + op.text + s.slice(at);
      } else {
        // Replace the value of the which-th attribute.
        let k = 0;
        const target = op.which % 40;
        s = s.replace(/="[^"]*"/g, (m) => (k++ === target ? `="${op.text}"` : m));
      }
    }
    return s;
  }),
);

describe("parseOmeXml on random and damaged text", () => {
  test.each([
    ["an unclosed XML declaration", '<?xml versio1.0"?><OME><Image/></OME>'],
    ["elements nested 1,000 deep", `<OME>${"<a>".repeat(1000)}${"</a>".repeat(1000)}</OME>`],
  ])("reports %s, which the validator lets through, as OmeXmlError", (_, text) => {
    expect(() => parseOmeXml(text)).toThrow(OmeXmlError);
  });


  test("returns whole-number sizes and a known dimension order, or throws OmeXmlError", () => {
    let parsed = 0;
    fc.assert(
      fc.property(omeArb, (text) => {
        let meta;
        try {
          meta = parseOmeXml(text);
        } catch (error) {
          if (error instanceof OmeXmlError) return;
          const e = error instanceof Error ? error : new Error(String(error));
          throw new Error(`parseOmeXml failed with ${e.name}, not OmeXmlError: ${e.message}`, { cause: e });
        }
        parsed++;
        expect(meta.images.length).toBeGreaterThan(0);
        for (const image of meta.images) {
          for (const n of [image.sizeX, image.sizeY, image.sizeZ, image.sizeC, image.sizeT]) expect(Number.isInteger(n) && n >= 1).toBe(true);
          expect(DIMENSION_ORDERS).toContain(image.dimensionOrder);
          for (const p of image.planes) for (const n of [p.c, p.z, p.t]) expect(Number.isInteger(n) && n >= 0).toBe(true);
          for (const ch of image.channels) if (ch.colour !== null) expect(ch.colour).toMatch(/^#[0-9a-f]{6}$/);
        }
      }),
      fuzzOptions(runs(4000)),
    );
    // Some damaged documents must still be accepted, or the property only ever saw errors.
    expect(parsed).toBeGreaterThan(runs(4000) / 20);
  }, 60_000);
});

// ---------------------------------------------------------------------------------------------
// Locality: reading the structure must not pull in pixel data.

describe("bytes read", () => {
  test("readTiffStructure reads only the 64 KiB windows that hold the header, IFDs and tag arrays", async () => {
    await fc.assert(
      fc.asyncProperty(
        fc.record({
          planes: fc.integer({ min: 1, max: 5 }),
          width: fc.integer({ min: 200, max: 600 }),
          height: fc.integer({ min: 60, max: 300 }),
          rowsPerStrip: fc.integer({ min: 1, max: 300 }),
          littleEndian: fc.boolean(),
          bigTiff: fc.boolean(),
          ifdFirst: fc.boolean(),
        }),
        async (o) => {
          const built = buildTiff({ ...o, bits: 16, planes: Array.from({ length: o.planes }, () => ({ data: new Uint16Array(o.width * o.height) })) });
          const counted = countingSource(bufferSource(built.bytes));
          const s = await readTiffStructure(counted.source);
          expect(s.ifds.map((i) => i.offset)).toEqual(built.ifdOffsets);
          const window = 65536;
          const needed = new Set<number>();
          for (const [a, b] of built.metadata) for (let w = Math.floor(a / window); w <= Math.floor((b - 1) / window); w++) needed.add(w);
          for (const r of counted.reads) {
            expect(r.offset % window).toBe(0);
            expect(needed.has(r.offset / window), `window at ${r.offset} holds only pixels`).toBe(true);
          }
          // Each needed window once.
          expect(counted.reads.length).toBe(needed.size);
        },
      ),
      fuzzOptions(runs(40)),
    );
  });

  test("a 4-plane, 4 MiB file costs less than an eighth of its bytes to index", async () => {
    const built = buildTiff({ width: 1024, height: 512, bits: 16, rowsPerStrip: 512, planes: Array.from({ length: 4 }, () => ({ data: new Uint16Array(1024 * 512) })) });
    const counted = countingSource(bufferSource(built.bytes));
    await readTiffStructure(counted.source);
    const read = counted.reads.reduce((n, r) => n + Math.min(r.length, built.bytes.length - r.offset), 0);
    expect(read).toBeLessThan(built.bytes.length / 8);
  });

  test("decodePlane reads only the header, its own IFD and its own strips", async () => {
    await fc.assert(
      fc.asyncProperty(
        fc.record({
          planes: fc.integer({ min: 2, max: 4 }),
          plane: fc.nat(),
          width: fc.integer({ min: 8, max: 160 }),
          height: fc.integer({ min: 8, max: 80 }),
          rowsPerStrip: fc.integer({ min: 1, max: 80 }),
          littleEndian: fc.boolean(),
          bigTiff: fc.boolean(),
          ifdFirst: fc.boolean(),
        }),
        async (o) => {
          const data = Array.from({ length: o.planes }, (_, p) => pattern(o.width, o.height, 16, p));
          const built = buildTiff({ ...o, bits: 16, planes: data.map((d) => ({ data: d })) });
          const k = o.plane % o.planes;
          const counted = countingSource(bufferSource(built.bytes));
          const plane = await decodePlane(counted.source, built.ifdOffsets[k]);
          expect(plane.data).toEqual(data[k]);
          const strips = built.strips[k];
          const allowed: [number, number][] = [[0, 16], built.metadata[k + 1], [strips[0][0], strips[strips.length - 1][1]]];
          for (const r of counted.reads) {
            const inside = allowed.some(([a, b]) => r.offset >= a && r.offset + r.length <= b);
            expect(inside, `read ${r.offset}+${r.length} outside plane ${k}`).toBe(true);
          }
        },
      ),
      fuzzOptions(runs(60)),
    );
  });
});
