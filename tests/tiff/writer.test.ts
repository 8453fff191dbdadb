import { spawnSync } from "node:child_process";
import { readFileSync, statSync, writeFileSync } from "node:fs";
import { deflateSync } from "node:zlib";
import { afterAll, describe, expect, test } from "vitest";
import { bufferSource } from "@/lib/tiff/byte-source";
import { decodePlane } from "@/lib/tiff/decode";
import { parseOmeXml } from "@/lib/tiff/ome";
import { readTiffStructure } from "@/lib/tiff/structure";
import { createTiffWriter, hexToOmeColour, omeXml, TiffWriteError, uncompressedTiffSize, writeTiff, type TiffWriteOptions } from "@/lib/tiff/writer";
import { PYTHON, run, tempDir, tifffileInfo, TIFFCP } from "@/tests/helpers/tiff-tools";

const tmp = tempDir("writer");
afterAll(() => tmp.remove());

const compress = (b: Uint8Array) => deflateSync(b);

// Odd sizes leave a short last strip; a seeded LCG (Numerical Recipes constants) fills the planes.
const W = 50;
const H = 37;
function planes16(n: number, seed = 1): Uint16Array[] {
  let s = seed >>> 0;
  return Array.from({ length: n }, () =>
    Uint16Array.from({ length: W * H }, (_, i) => {
      s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
      // A smooth ramp plus noise, with the full 16-bit range present so wrap-around in differencing is exercised.
      return i === 0 ? 65535 : i === 1 ? 0 : ((i % W) * 40 + (s >>> 22)) & 0xffff;
    }),
  );
}
function planes8(n: number): Uint8Array[] {
  return planes16(n, 9).map((p) => Uint8Array.from(p, (v) => v & 0xff));
}

// Reads every page with tifffile (an independent reader) into a raw little-endian dump.
const READ_PAGES = `
import sys, json, numpy as np, tifffile
with tifffile.TiffFile(sys.argv[1]) as tif:
    data = np.stack([p.asarray() for p in tif.pages])
    data.astype(data.dtype.newbyteorder("<")).tofile(sys.argv[2])
    s = tif.series[0]
    print(json.dumps({"dtype": str(data.dtype), "shape": list(data.shape), "ome": bool(tif.is_ome), "seriesAxes": s.axes, "seriesShape": list(s.shape)}))
`;
function readWithTifffile(path: string) {
  const raw = `${path}.raw`;
  const meta = JSON.parse(run(PYTHON, ["-c", READ_PAGES, path, raw])) as { dtype: string; shape: number[]; ome: boolean; seriesAxes: string; seriesShape: number[] };
  const bytes = readFileSync(raw);
  const values = meta.dtype === "uint8" ? new Uint8Array(bytes) : new Uint16Array(bytes.buffer, bytes.byteOffset, bytes.byteLength / 2);
  return { ...meta, values };
}

function concat(ps: (Uint8Array | Uint16Array)[]): Uint8Array | Uint16Array {
  const out = ps[0] instanceof Uint8Array ? new Uint8Array(ps.length * ps[0].length) : new Uint16Array(ps.length * ps[0].length);
  ps.forEach((p, i) => out.set(p, i * p.length));
  return out;
}

/** libtiff's tiffinfo with -D (reads every strip); anything on stderr is a warning or error. */
function tiffinfoStderr(path: string): string {
  const r = spawnSync("/usr/bin/tiffinfo", ["-D", path], { encoding: "utf8", maxBuffer: 64 * 1024 * 1024 });
  if (r.error) throw r.error;
  return `${r.status === 0 ? "" : `exit ${r.status}\n`}${r.stderr}`;
}

const VARIANTS: { name: string; options: Partial<TiffWriteOptions> }[] = [
  { name: "uncompressed, 8-row strips", options: { rowsPerStrip: 8 } },
  { name: "uncompressed, default strips", options: {} },
  { name: "Deflate", options: { compression: "deflate", compress, rowsPerStrip: 5 } },
  { name: "Deflate + horizontal predictor", options: { compression: "deflate", compress, predictor: true, rowsPerStrip: 8 } },
  { name: "BigTIFF, uncompressed", options: { bigTiff: true, rowsPerStrip: 8 } },
  { name: "BigTIFF, Deflate + horizontal predictor", options: { bigTiff: true, compression: "deflate", compress, predictor: true, rowsPerStrip: 16 } },
];

describe.each([16, 8] as const)("%i-bit files the writer produces", (bits) => {
  const input = bits === 16 ? planes16(4) : planes8(4);

  test.each(VARIANTS)("$name: tifffile, libtiff and our decoder read back the same values", async ({ name, options }) => {
    const opts: TiffWriteOptions = { width: W, height: H, bitsPerSample: bits, description: "written by a test", ...options };
    const bytes = await writeTiff(input, opts);
    const path = tmp.path(`${bits}-${name.replace(/\W+/g, "_")}.tif`);
    writeFileSync(path, bytes);

    // Independent reader: Debian's tifffile + numpy (Gohlke, tifffile).
    const theirs = readWithTifffile(path);
    expect(theirs.dtype).toBe(bits === 16 ? "uint16" : "uint8");
    expect(theirs.shape).toEqual([4, H, W]);
    expect(theirs.values).toEqual(concat(input));
    const [info] = tifffileInfo(path);
    expect(info.bigTiff).toBe(!!options.bigTiff);
    expect(info.littleEndian).toBe(true);
    expect(info.pages.map((p) => p.compression)).toEqual(new Array(4).fill(options.compression === "deflate" ? 8 : 1));
    expect(info.pages.map((p) => p.predictor)).toEqual(new Array(4).fill(options.predictor ? 2 : 1));
    expect(info.pages[0].description).toBe("written by a test");

    // libtiff (TIFF 6.0 reference library): no warnings while reading every strip, and tiffcp
    // re-encodes it without complaint; our decoder must then read libtiff's copy identically.
    expect(tiffinfoStderr(path)).toBe("");
    const copy = tmp.path(`${bits}-${name.replace(/\W+/g, "_")}.copy.tif`);
    const cp = spawnSync(TIFFCP, ["-c", "none", path, copy], { encoding: "utf8" });
    expect(`${cp.status} ${cp.stderr}`).toBe("0 ");

    // Round trip through our reader: planes opened by stored IFD offset.
    for (const file of [bytes, new Uint8Array(readFileSync(copy))]) {
      const src = bufferSource(file);
      const structure = await readTiffStructure(src);
      expect(structure.ifds).toHaveLength(4);
      const decoded = await Promise.all(structure.ifds.map((ifd) => decodePlane(src, ifd.offset)));
      expect(concat(decoded.map((d) => d.data as Uint8Array | Uint16Array))).toEqual(concat(input));
    }
  });
});

describe("streaming layout", () => {
  test("chunks reach the sink plane by plane, and each IFD follows its own strips", async () => {
    const input = planes16(3);
    const chunks: Uint8Array[] = [];
    const writer = createTiffWriter(async (c) => {
      chunks.push(c.slice());
    }, { width: W, height: H, bitsPerSample: 16, rowsPerStrip: 8, compression: "deflate", compress, predictor: true });
    await writer.addPlane(input[0]);
    // Header and the first plane's strips are out before the second plane exists (no whole file in memory).
    const afterFirst = chunks.reduce((n, c) => n + c.length, 0);
    expect(afterFirst).toBeGreaterThan(8);
    await writer.addPlane(input[1]);
    await writer.addPlane(input[2]);
    const result = await writer.finish();
    const bytes = new Uint8Array(result.bytesWritten);
    let at = 0;
    for (const c of chunks) {
      bytes.set(c, at);
      at += c.length;
    }
    expect(at).toBe(result.bytesWritten);
    expect(bytes).toEqual(await writeTiff(input, { width: W, height: H, bitsPerSample: 16, rowsPerStrip: 8, compression: "deflate", compress, predictor: true }));

    const path = tmp.path("stream.tif");
    writeFileSync(path, bytes);
    const [info] = tifffileInfo(path);
    // tifffile's page offsets are the IFD positions the writer reported; TIFF 6.0 puts IFDs on word boundaries.
    expect(info.pages.map((p) => p.offset)).toEqual(result.ifdOffsets);
    expect(result.ifdOffsets.every((o) => o % 2 === 0)).toBe(true);
    for (const [i, page] of info.pages.entries()) {
      expect(page.offset).toBeGreaterThan(Math.max(...page.dataOffsets));
      if (i > 0) expect(Math.min(...page.dataOffsets)).toBeGreaterThan(info.pages[i - 1].offset);
    }
  });

  test.each([false, true])("uncompressedTiffSize predicts the written size (BigTIFF %s)", async (bigTiff) => {
    const opts = { width: W, height: H, bitsPerSample: 16 as const, rowsPerStrip: 7, bigTiff, description: "<OME>µm</OME>" };
    const bytes = await writeTiff(planes16(5), opts);
    expect(uncompressedTiffSize(5, opts)).toBe(bytes.length);
  });

  test("refuses a plane of the wrong size, a wrong array type, and Deflate without a codec", async () => {
    const w = createTiffWriter(() => undefined, { width: W, height: H, bitsPerSample: 16 });
    await expect(w.addPlane(new Uint16Array(10))).rejects.toThrow(TiffWriteError);
    await expect(w.addPlane(new Uint8Array(W * H))).rejects.toThrow(/Uint16Array/);
    expect(() => createTiffWriter(() => undefined, { width: W, height: H, bitsPerSample: 16, compression: "deflate" })).toThrow(/compress/);
    await expect(createTiffWriter(() => undefined, { width: W, height: H, bitsPerSample: 8 }).finish()).rejects.toThrow(/at least one plane/);
  });

  test("writes no GeoTIFF tags (33550, 33922, 34735–34737)", async () => {
    const path = tmp.path("plain.tif");
    writeFileSync(path, await writeTiff(planes16(1), { width: W, height: H, bitsPerSample: 16 }));
    // tiffinfo lists every tag it knows; GeoTIFF keys would appear as unknown or Geo* fields.
    const out = run("/usr/bin/tiffinfo", [path]);
    expect(out).not.toMatch(/Geo|33550|33922|3473[5-7]/);
    expect(out).toMatch(/Bits\/Sample: 16/);
    expect(statSync(path).size).toBe(uncompressedTiffSize(1, { width: W, height: H, bitsPerSample: 16 }));
  });
});

describe("omeXml", () => {
  const input = {
    name: "invented cells, 2 µm beads",
    sizeX: W,
    sizeY: H,
    sizeZ: 3,
    sizeC: 2,
    sizeT: 4,
    order: "XYZCT" as const,
    type: "uint16" as const,
    significantBits: 12,
    physicalSizeX: 0.1625,
    physicalSizeY: 0.1625,
    physicalSizeZ: 0.5,
    timeIncrement: 2.5,
    channels: [
      { name: "nuclei", emissionWavelength: 461, color: "#0072b2" },
      { name: "membrane & co", emissionWavelength: 520, color: "#ffffff" },
    ],
  };

  test("ome.ts parses back every field it wrote", () => {
    const [image] = parseOmeXml(omeXml(input)).images;
    expect(image).toMatchObject({
      name: input.name,
      sizeX: W,
      sizeY: H,
      sizeZ: 3,
      sizeC: 2,
      sizeT: 4,
      dimensionOrder: "XYZCT",
      type: "uint16",
      significantBits: 12,
      physicalSizeUm: { x: 0.1625, y: 0.1625, z: 0.5 },
      timeIncrementSeconds: 2.5,
      tiffData: [{ ifd: 0, firstC: 0, firstZ: 0, firstT: 0, planeCount: 24 }],
    });
    expect(image.channels).toEqual([
      { name: "nuclei", emissionWavelengthNm: 461, colour: "#0072b2", alpha: 255 },
      { name: "membrane & co", emissionWavelengthNm: 520, colour: "#ffffff", alpha: 255 },
    ]);
    // XYZCT: z fastest, then c, then t (OME schema 2016-06, DimensionOrder).
    expect(image.planes.slice(0, 4).map(({ c, z, t }) => [c, z, t])).toEqual([[0, 0, 0], [0, 1, 0], [0, 2, 0], [1, 0, 0]]);
    expect(image.planes[23]).toEqual({ c: 1, z: 2, t: 3, deltaTSeconds: 7.5 });
  });

  test("colour is OME's signed 32-bit RGBA: opaque white is −1", () => {
    // OME schema 2016-06, Color type: RGBA as a signed int, so #ffffff with alpha 255 is -1.
    expect(hexToOmeColour("#ffffff")).toBe(-1);
    expect(hexToOmeColour("#ff0000")).toBe(-16776961);
  });

  test("tifffile recognises the file as OME-TIFF with the declared axes", async () => {
    const planes = planes16(24);
    const bytes = await writeTiff(planes, { width: W, height: H, bitsPerSample: 16, description: omeXml(input), compression: "deflate", compress, predictor: true });
    const path = tmp.path("stack.ome.tif");
    writeFileSync(path, bytes);
    const theirs = readWithTifffile(path);
    expect(theirs.ome).toBe(true);
    // tifffile reports OME series slowest axis first: XYZCT → T, C, Z, Y, X.
    expect(theirs.seriesAxes).toBe("TCZYX");
    expect(theirs.seriesShape).toEqual([4, 2, 3, H, W]);
    expect(theirs.values).toEqual(concat(planes));
    expect(tiffinfoStderr(path)).toBe("");
    // The UTF-8 name (µ) survives the trip through the file and our structure reader.
    const structure = await readTiffStructure(bufferSource(bytes));
    expect(parseOmeXml(structure.ifds[0].imageDescription ?? "").images[0].name).toBe(input.name);
  });

  test("refuses a channel list that does not match SizeC", () => {
    expect(() => omeXml({ ...input, channels: input.channels.slice(0, 1) })).toThrow(/SizeC/);
  });
});
