import { readFileSync, statSync, truncateSync } from "node:fs";
import { afterAll, beforeAll, describe, expect, test } from "vitest";
import { DEMO_CAMERA, saturationElectrons } from "@/lib/imaging/synthetic";
import { histogram16 } from "@/lib/imaging/histogram";
import { DEMO_FILES, MANIFEST_NAME, PHOTON_TRANSFER_FRACTIONS, writeDemoFiles, type DemoResult } from "@/lib/server/demo/generate";
import { decodePlane } from "@/lib/tiff/decode";
import { fileSource } from "@/lib/tiff/file-source";
import { parseOmeXml, planeIndex } from "@/lib/tiff/ome";
import { readTiffStructure } from "@/lib/tiff/structure";
import { run, PYTHON, tempDir, tifffileInfo } from "@/tests/helpers/tiff-tools";

const tmp = tempDir("demo");
afterAll(() => tmp.remove());

let first: DemoResult[];
beforeAll(async () => {
  first = await writeDemoFiles(tmp.dir);
}, 300_000);

/** Every plane of a file, decoded by our reader (planes opened by stored IFD offset). */
async function planesOf(name: string) {
  const src = await fileSource(tmp.path(name));
  try {
    const structure = await readTiffStructure(src);
    const planes: Uint16Array[] = [];
    for (const ifd of structure.ifds) planes.push((await decodePlane(src, ifd.offset)).data as Uint16Array);
    return { structure, planes };
  } finally {
    await src.close();
  }
}

function pairStats(a: Uint16Array, b: Uint16Array) {
  let s = 0;
  let d = 0;
  for (let i = 0; i < a.length; i++) {
    s += a[i] + b[i];
    d += (a[i] - b[i]) ** 2;
  }
  return { mean: s / (2 * a.length), variance: d / (2 * a.length) };
}

describe("writeDemoFiles", () => {
  test("writes the five demo files and a manifest", () => {
    expect(first.map((r) => [r.name, r.written])).toEqual(Object.values(DEMO_FILES).map((f) => [f.name, true]));
    for (const r of first) expect(statSync(r.path).size).toBe(r.bytes);
    const manifest = JSON.parse(readFileSync(tmp.path(MANIFEST_NAME), "utf8"));
    expect(manifest.files.map((f: { name: string; bytes: number }) => [f.name, f.bytes])).toEqual(first.map((r) => [r.name, r.bytes]));
  });

  test("the OME-TIFF holds 3 channels × 7 z × 30 t of 512 × 512, and tifffile agrees", async () => {
    const f = DEMO_FILES.omeStack;
    // Independent reader (tifffile) reports the OME series without our parser.
    const out = run(PYTHON, ["-c", "import sys, tifffile\nwith tifffile.TiffFile(sys.argv[1]) as t: s = t.series[0]; print(t.is_ome, s.axes, list(s.shape), s.dtype)", tmp.path(f.name)]);
    expect(out.trim()).toBe("True TCZYX [30, 3, 7, 512, 512] uint16");
    const src = await fileSource(tmp.path(f.name));
    try {
      const structure = await readTiffStructure(src);
      const [image] = parseOmeXml(structure.ifds[0].imageDescription ?? "").images;
      expect(image).toMatchObject({ sizeC: 3, sizeZ: 7, sizeT: 30, sizeX: 512, sizeY: 512, dimensionOrder: "XYZCT", significantBits: 12 });
      expect(structure.ifds).toHaveLength(630);

      // Saturation (FACTS.md: ceiling 2^12 − 1 = 4095 from SignificantBits): only channel 0, the
      // designated one, reaches the ceiling; nothing exceeds it.
      const atCeiling = [0, 0, 0];
      let max = 0;
      for (const ifd of structure.ifds) {
        const { c } = planeIndex("XYZCT", { sizeZ: image.sizeZ, sizeC: image.sizeC, sizeT: image.sizeT }, ifd.index);
        const h = histogram16((await decodePlane(src, ifd.offset)).data as Uint16Array);
        atCeiling[c] += h[4095];
        for (let v = h.length - 1; v > max; v--) if (h[v] > 0) max = v;
      }
      expect(max).toBe(4095);
      expect(atCeiling[0]).toBeGreaterThan(0);
      expect(atCeiling.slice(1)).toEqual([0, 0]);
    } finally {
      await src.close();
    }
  }, 120_000);

  test("the plain TIFF has no OME-XML, 40 Deflate + predictor pages, clipping only in channel 0", async () => {
    const f = DEMO_FILES.plainStack;
    const [info] = tifffileInfo(tmp.path(f.name));
    expect(info.pages).toHaveLength(40);
    expect(info.pages.every((p) => p.compression === 8 && p.predictor === 2)).toBe(true);
    const { structure, planes } = await planesOf(f.name);
    expect(structure.ifds[0].imageDescription).toBeNull();
    // page = t × 2 + c (DEMO_FILES.plainStack.pageOrder)
    const clipped = [0, 1].map((c) => planes.filter((_, i) => i % 2 === c).reduce((n, p) => n + histogram16(p)[4095], 0));
    expect(clipped[0]).toBeGreaterThan(0);
    expect(clipped[1]).toBe(0);
    expect(planes.every((p) => p.every((v) => v <= 4095))).toBe(true);
  }, 60_000);

  test("the photon-transfer series gives back the camera's gain and read noise (EMVA 1288 mean–variance)", async () => {
    const f = DEMO_FILES.photonTransfer;
    const { structure, planes } = await planesOf(f.name);
    expect(planes).toHaveLength(2 + 2 * PHOTON_TRANSFER_FRACTIONS.length);
    expect(JSON.parse(structure.ifds[0].imageDescription ?? "{}").pageOrder).toBe(f.pageOrder);
    const [dark, ...flats] = Array.from({ length: planes.length / 2 }, (_, p) => pairStats(planes[2 * p], planes[2 * p + 1]));
    // Mean rises with exposure (linear model) until the ceiling.
    for (let i = 1; i < flats.length; i++) expect(flats[i].mean).toBeGreaterThan(flats[i - 1].mean);
    // EMVA 1288: K = slope through the origin of (σy² − σy.dark²) on (μy − μy.dark), up to 70 % of saturation.
    const linear = flats.filter((p) => p.mean - dark.mean <= 0.7 * (DEMO_CAMERA.ceiling - dark.mean));
    expect(linear.length).toBeGreaterThanOrEqual(5);
    const sxy = linear.reduce((s, p) => s + (p.mean - dark.mean) * (p.variance - dark.variance), 0);
    const sxx = linear.reduce((s, p) => s + (p.mean - dark.mean) ** 2, 0);
    const gain = sxy / sxx;
    expect(Math.abs(gain / DEMO_CAMERA.gainDnPerE - 1)).toBeLessThan(0.02);
    const readNoise = Math.sqrt(dark.variance - 1 / 12) / gain;
    expect(Math.abs(readNoise / DEMO_CAMERA.readNoiseE - 1)).toBeLessThan(0.03);
    // Saturation is where the variance peaks (EMVA 1288): not at the top level, which is clipped flat.
    const peak = flats.reduce((best, p, i) => (p.variance > flats[best].variance ? i : best), 0);
    expect(peak).toBeGreaterThan(linear.length - 1);
    expect(peak).toBeLessThan(flats.length - 1);
    expect(PHOTON_TRANSFER_FRACTIONS[peak] * saturationElectrons(DEMO_CAMERA)).toBeLessThanOrEqual(saturationElectrons(DEMO_CAMERA));
  }, 60_000);

  test("the dark frame sits at the offset and the flat field shows the illumination fall-off", async () => {
    const dark = (await planesOf(DEMO_FILES.darkFrame.name)).planes[0];
    const flat = (await planesOf(DEMO_FILES.flatField.name)).planes[0];
    const mean = (p: Uint16Array, x0: number, y0: number, n: number) => {
      let s = 0;
      for (let y = y0; y < y0 + n; y++) for (let x = x0; x < x0 + n; x++) s += p[y * 512 + x];
      return s / (n * n);
    };
    // Offset ≈ 100 DN (FACTS.md, common practice); a dark frame at 0 would hide the noise.
    expect(Math.abs(mean(dark, 0, 0, 512) - DEMO_CAMERA.offsetDn)).toBeLessThan(0.5);
    expect(dark.reduce((m, v) => Math.min(m, v), Infinity)).toBeGreaterThan(0);
    // Flat − dark: the corner gets less light than the centre of illumination (invented 30 % radial fall-off).
    const centre = mean(flat, 266, 220, 20) - mean(dark, 266, 220, 20);
    const corner = mean(flat, 0, 492, 20) - mean(dark, 0, 492, 20);
    expect(corner / centre).toBeGreaterThan(0.6);
    expect(corner / centre).toBeLessThan(0.85);
  });

  test("a second run keeps complete files and rewrites a truncated one", async () => {
    const before = first.map((r) => statSync(r.path).mtimeMs);
    const again = await writeDemoFiles(tmp.dir);
    expect(again.map((r) => r.written)).toEqual([false, false, false, false, false]);
    expect(again.map((r) => statSync(r.path).mtimeMs)).toEqual(before);

    const flat = tmp.path(DEMO_FILES.flatField.name);
    const size = statSync(flat).size;
    truncateSync(flat, size - 100);
    const third = await writeDemoFiles(tmp.dir);
    expect(third.map((r) => r.written)).toEqual([false, false, true, false, false]);
    expect(statSync(flat).size).toBe(size);
  }, 60_000);
});
