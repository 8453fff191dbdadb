import { afterAll, beforeAll, describe, expect, test } from "vitest";
import { bufferSource, windowedSource } from "@/lib/tiff/byte-source";
import { fileSource } from "@/lib/tiff/file-source";
import { readTiffStructure, TiffFormatError, type TiffStructure } from "@/lib/tiff/structure";
import { countingSource, makeTiffs, tempDir, tiffcp, TIFFCP_VARIANTS, tifffileInfo, type TifffileInfo } from "@/tests/helpers/tiff-tools";
import { readFileSync } from "node:fs";
import { tinyTiff } from "./tiny-tiff";

const tmp = tempDir("structure");
afterAll(() => tmp.remove());

async function structureOf(path: string): Promise<TiffStructure> {
  const src = await fileSource(path);
  try {
    return await readTiffStructure(src);
  } finally {
    await src.close();
  }
}

// Reference: tifffile 2023.2.3 (C. Gohlke), an independent TIFF reader, run through Debian's python3-tifffile.
function expectSameAsTifffile(ours: TiffStructure, ref: TifffileInfo): void {
  expect(ours.littleEndian).toBe(ref.littleEndian);
  expect(ours.bigTiff).toBe(ref.bigTiff);
  expect(ours.ifds.map((i) => i.offset)).toEqual(ref.pages.map((p) => p.offset));
  ours.ifds.forEach((ifd, k) => {
    const p = ref.pages[k];
    expect([ifd.width, ifd.height, ifd.bitsPerSample[0]]).toEqual([p.width, p.height, p.bitsPerSample]);
    expect([ifd.compression, ifd.predictor]).toEqual([p.compression, p.predictor]);
    expect(ifd.layout.offsets).toEqual(p.dataOffsets);
    expect(ifd.layout.byteCounts).toEqual(p.byteCounts);
    if (p.tiled) {
      expect(ifd.layout).toMatchObject({ kind: "tiles", tileWidth: p.tileWidth, tileLength: p.tileLength });
    } else {
      expect(ifd.layout).toMatchObject({ kind: "strips", rowsPerStrip: p.rowsPerStrip });
    }
  });
}

const variantPath = (name: string) => tmp.path(`${name.replace(/\W+/g, "_")}.tif`);
const KINDS = ["u16-be-predictor.tif", "u16-be-tiles.tif", "f32.tif", "u8.tif"];

describe("readTiffStructure on files written by independent tools", () => {
  let stack: string;
  const ref = new Map<string, TifffileInfo>();
  beforeAll(() => {
    makeTiffs("stack", tmp.dir);
    makeTiffs("kinds", tmp.dir);
    stack = tmp.path("stack.ome.tif");
    const paths = [stack, ...TIFFCP_VARIANTS.map(({ name, options }) => tiffcp(stack, variantPath(name), options)), ...KINDS.map((k) => tmp.path(k))];
    tifffileInfo(...paths).forEach((info, i) => ref.set(paths[i], info));
  });

  test("finds the IFDs and strips tifffile finds in a tifffile OME-TIFF", async () => {
    expectSameAsTifffile(await structureOf(stack), ref.get(stack)!);
  });

  test.each(TIFFCP_VARIANTS)("finds the IFDs, strips and tiles tifffile finds after tiffcp writes $name", async ({ name }) => {
    const ours = await structureOf(variantPath(name));
    expectSameAsTifffile(ours, ref.get(variantPath(name))!);
    expect(ours.ifds.every((i) => i.supported && !i.lossy)).toBe(true);
  });

  test.each(KINDS)("agrees with tifffile on %s", async (file) => {
    expectSameAsTifffile(await structureOf(tmp.path(file)), ref.get(tmp.path(file))!);
  });

  test("returns the first IFD's ImageDescription exactly as tifffile reads it", async () => {
    const ours = await structureOf(stack);
    expect(ours.ifds[0].imageDescription).toBe(ref.get(stack)!.pages[0].description);
    expect(ours.ifds[0].imageDescription).toContain("<OME");
  });

  test("marks JPEG written by tiffcp as lossy and not supported", async () => {
    const jpeg = tiffcp(tmp.path("u8.tif"), tmp.path("jpeg.tif"), ["-r", "8", "-c", "jpeg"]);
    const ifd = (await structureOf(jpeg)).ifds[0];
    // TIFF 6.0 (Adobe, 1992): compression 7 is JPEG, a lossy codec (FACTS.md).
    expect(ifd.compression).toBe(7);
    expect(ifd.lossy).toBe(true);
    expect(ifd.supported).toBe(false);
    expect(ifd.unsupportedReason).toMatch(/lossy/);
  });

  test("walks 2,000 IFDs with one underlying read per 64 KiB window", async () => {
    makeTiffs("many", tmp.dir, "2000");
    const path = tmp.path("many.tif");
    const file = await fileSource(path);
    const counted = countingSource(file);
    const ours = await readTiffStructure(counted.source);
    await file.close();
    expect(ours.ifds).toHaveLength(2000);
    expect(ours.ifds.map((i) => i.offset)).toEqual(tifffileInfo(path)[0].pages.map((p) => p.offset));
    expect(counted.reads.length).toBeLessThanOrEqual(Math.ceil(file.size / 65536));
  });

  test("reports a truncated file with the byte where the data should be", async () => {
    const whole = readFileSync(tiffcp(stack, tmp.path("trunc-src.tif"), ["-c", "none"]));
    const cut = whole.subarray(0, Math.floor(whole.byteLength / 2));
    await expect(readTiffStructure(bufferSource(cut))).rejects.toThrow(/past the end of the \d+-byte file \(is the file truncated\?\)/);
  });
});

describe("readTiffStructure on malformed files", () => {
  test("rejects a file that does not start with II or MM", async () => {
    const png = new Uint8Array([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a, 0, 0, 0, 0]);
    await expect(readTiffStructure(bufferSource(png))).rejects.toThrow(new TiffFormatError("This is not a TIFF file: it does not start with the byte-order mark II or MM"));
  });

  test("rejects a version number other than 42 or 43", async () => {
    const bytes = tinyTiff();
    new DataView(bytes.buffer).setUint16(2, 44, true);
    await expect(readTiffStructure(bufferSource(bytes))).rejects.toThrow(/version number 44/);
  });

  test("stops an IFD chain that points back to itself", async () => {
    await expect(readTiffStructure(bufferSource(tinyTiff({ next: 8 })))).rejects.toThrow(/the IFD chain loops/);
  });

  test("reports a next-IFD offset past the end of the file", async () => {
    await expect(readTiffStructure(bufferSource(tinyTiff({ next: 1_000_000 })))).rejects.toThrow(/IFD 1 should start at byte 1000000, past the end/);
  });

  test("reports a first-IFD offset past the end of the file", async () => {
    await expect(readTiffStructure(bufferSource(tinyTiff({ firstIfd: 99_999 })))).rejects.toThrow(/The first IFD should start at byte 99999/);
  });

  test("refuses a tag that claims more values than the file has bytes", async () => {
    const bytes = tinyTiff({ extra: [{ tag: 270, type: 4, count: 2_000_000_000, value: 20 }] });
    await expect(readTiffStructure(bufferSource(bytes))).rejects.toThrow(/Tag 270 .* claims 2000000000 values/);
  });

  test("refuses a BigTIFF IFD that claims an absurd number of entries", async () => {
    // BigTIFF header: II, 43, offset size 8, 0, first IFD at 16; then an 8-byte entry count of 2^40.
    const bytes = new Uint8Array(64);
    const v = new DataView(bytes.buffer);
    bytes.set([0x49, 0x49]);
    v.setUint16(2, 43, true);
    v.setUint16(4, 8, true);
    v.setBigUint64(8, 16n, true);
    v.setBigUint64(16, 2n ** 40n, true);
    await expect(readTiffStructure(bufferSource(bytes))).rejects.toThrow(/claims 1099511627776 entries/);
  });

  test("refuses more IFDs than the caller allows", async () => {
    const bytes = tinyTiff();
    await expect(readTiffStructure(bufferSource(bytes), { maxIfds: 0 })).rejects.toThrow(/more than 0 IFDs/);
  });

  test("marks a compression code it cannot decode as unsupported, with its name", async () => {
    const ifd = (await readTiffStructure(bufferSource(tinyTiff({ compression: 34712 })))).ifds[0];
    expect(ifd).toMatchObject({ lossy: true, supported: false });
    expect(ifd.unsupportedReason).toMatch(/JPEG 2000 compression is lossy/);
  });

  test("caches windows so repeated metadata reads cost one underlying read", async () => {
    const counted = countingSource(bufferSource(tinyTiff()));
    const win = windowedSource(counted.source, { windowSize: 64 });
    await win.read(0, 10);
    await win.read(20, 30);
    expect(counted.reads).toEqual([{ offset: 0, length: 64 }]);
    expect(new Uint8Array(await win.read(60, 10))).toEqual(tinyTiff().subarray(60, 70));
  });
});
