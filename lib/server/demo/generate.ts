import "server-only";
import { mkdir, open, readFile, rename, rm, stat, writeFile } from "node:fs/promises";
import { join } from "node:path";
import { deflateSync } from "node:zlib";
import { createRandom } from "@/lib/imaging/random";
import {
  DEMO_CAMERA,
  DEMO_CHANNELS,
  exposeCamera,
  makeScene,
  masterFrame,
  photonTransferFrames,
  renderSignal,
  responseMap,
  saturationElectrons,
  type Scene,
} from "@/lib/imaging/synthetic";
import { createTiffWriter, omeXml, uncompressedTiffSize, type TiffWriteOptions } from "@/lib/tiff/writer";

/*
 * Demo data for a fresh workspace. Everything is INVENTED (lib/imaging/synthetic.ts): cultured cells
 * with a nuclear stain, a membrane marker and a mitochondrial marker on an invented 12-bit camera
 * (K = 0.5 DN/e⁻, offset 100 DN, read noise 2.2 e⁻). All files are seeded, so every run writes the same bytes.
 */

const SIZE = 512;
/** One illumination/PRNU pattern for every file, so the flat-field frame corrects the stacks. */
const RESPONSE_SEED = 0x0f1a7;
const MASTER_FRAMES = 16;

/**
 * Photon-transfer levels as fractions of the electrons that reach the ceiling: seven on the linear
 * part (EMVA 1288 fits up to 70 % of saturation), then 0.8–1.1 where the variance peaks and collapses.
 */
export const PHOTON_TRANSFER_FRACTIONS = [0.02, 0.05, 0.1, 0.2, 0.35, 0.5, 0.65, 0.8, 0.95, 1.1] as const;
/** Invented: a flat light source that fills the ADC in 100 ms, so exposure = fraction × 100 ms. */
const FULL_SCALE_EXPOSURE_MS = 100;

export interface DemoFile {
  name: string;
  title: string;
  sizeC: number;
  sizeZ: number;
  sizeT: number;
  width: number;
  height: number;
  /** How the IFDs are ordered, fastest-varying first (for files without OME-XML). */
  pageOrder: string;
}

export const DEMO_FILES = {
  omeStack: {
    name: "demo-cells-3c-7z-30t.ome.tif",
    title: "Invented cells, 3 stains, z-stack time-lapse (OME-TIFF)",
    sizeC: 3,
    sizeZ: 7,
    sizeT: 30,
    width: SIZE,
    height: SIZE,
    pageOrder: "XYZCT: z fastest, then channel, then time (in the OME-XML)",
  },
  plainStack: {
    name: "demo-cells-2c-20t-deflate.tif",
    title: "Invented cells, nuclear + mitochondrial stain, time-lapse (plain TIFF, Deflate)",
    sizeC: 2,
    sizeZ: 1,
    sizeT: 20,
    width: SIZE,
    height: SIZE,
    pageOrder: "channel fastest, then time: page = t × 2 + c (no OME-XML; c 0 nuclear stain, c 1 mitochondrial marker)",
  },
  flatField: {
    name: "demo-flat-field.tif",
    title: `Flat-field master frame (mean of ${MASTER_FRAMES})`,
    sizeC: 1,
    sizeZ: 1,
    sizeT: 1,
    width: SIZE,
    height: SIZE,
    pageOrder: "one page",
  },
  darkFrame: {
    name: "demo-dark-frame.tif",
    title: `Dark master frame (mean of ${MASTER_FRAMES})`,
    sizeC: 1,
    sizeZ: 1,
    sizeT: 1,
    width: SIZE,
    height: SIZE,
    pageOrder: "one page",
  },
  photonTransfer: {
    name: "demo-photon-transfer.tif",
    title: "Photon-transfer series: dark pair + flat pairs at 10 exposures",
    sizeC: 1,
    sizeZ: 1,
    sizeT: 2 + 2 * PHOTON_TRANSFER_FRACTIONS.length,
    width: SIZE,
    height: SIZE,
    pageOrder: "pages 0, 1: dark pair; pages 2 + 2i, 3 + 2i: flat pair at exposure level i (PHOTON_TRANSFER_FRACTIONS[i])",
  },
} as const satisfies Record<string, DemoFile>;

export const MANIFEST_NAME = "demo-manifest.json";

export interface DemoResult {
  name: string;
  path: string;
  bytes: number;
  /** False when a complete file was already there. */
  written: boolean;
}

/** A plane's own random stream, so a plane's noise does not depend on the order planes are made in. */
function planeRandom(fileSeed: number, plane: number) {
  return createRandom(Math.imul(fileSeed, 0x9e3779b1) ^ plane);
}

/** Streams planes into `path` through a temporary name, renamed only when complete (a crash leaves no half file). */
async function writeTiffFile(path: string, options: TiffWriteOptions, planes: Iterable<Uint16Array>): Promise<number> {
  const partial = `${path}.partial`;
  const handle = await open(partial, "w");
  try {
    const writer = createTiffWriter(async (chunk) => {
      await handle.write(chunk);
    }, options);
    for (const plane of planes) await writer.addPlane(plane);
    const { bytesWritten } = await writer.finish();
    await handle.close();
    await rename(partial, path);
    return bytesWritten;
  } catch (e) {
    await handle.close().catch(() => undefined);
    await rm(partial, { force: true });
    throw e;
  }
}

function* scenePlanes(scene: Scene, seed: number, coords: Iterable<{ c: number; z: number; t: number }>): Generator<Uint16Array> {
  const scratch = new Float32Array(scene.width * scene.height);
  let i = 0;
  for (const { c, z, t } of coords) {
    yield exposeCamera(renderSignal(scene, c, z, t, scratch), DEMO_CAMERA, planeRandom(seed, i++));
  }
}

async function sizeOf(path: string): Promise<number | null> {
  try {
    return (await stat(path)).size;
  } catch {
    return null;
  }
}

async function readManifest(dir: string): Promise<Record<string, number>> {
  try {
    const m = JSON.parse(await readFile(join(dir, MANIFEST_NAME), "utf8")) as { files?: { name: string; bytes: number }[] };
    return Object.fromEntries((m.files ?? []).map((f) => [f.name, f.bytes]));
  } catch {
    return {};
  }
}

/**
 * The OME-XML of a demo stack in XYZCT order: the demo channels, 12 significant bits, and invented
 * optics (6.5 µm camera pixels behind a 40× objective, 0.5 µm z steps, a frame every 30 s). Also used
 * by tests that write a small stack the way the demo does.
 */
export function demoOmeXml(size: { name: string; sizeX: number; sizeY: number; sizeZ: number; sizeC: number; sizeT: number }): string {
  return omeXml({
    ...size,
    order: "XYZCT",
    type: "uint16",
    significantBits: 12,
    physicalSizeX: 0.1625,
    physicalSizeY: 0.1625,
    physicalSizeZ: 0.5,
    timeIncrement: 30,
    channels: DEMO_CHANNELS.map((c) => ({ name: c.name, emissionWavelength: c.emissionWavelength, color: c.color })),
  });
}

/**
 * Writes the demo files into `dir` (created if needed). Idempotent: a file that exists with the
 * expected size is kept (uncompressed sizes are computed; the Deflate file's size comes from the
 * manifest written after it). Returns every file with its size and whether it was written now.
 */
export async function writeDemoFiles(dir: string): Promise<DemoResult[]> {
  await mkdir(dir, { recursive: true });
  const recorded = await readManifest(dir);
  const response = responseMap(SIZE, SIZE, RESPONSE_SEED);
  const base = { width: SIZE, height: SIZE, bitsPerSample: 16 } as const;
  const results: DemoResult[] = [];

  async function ensure(file: DemoFile, expected: number | null, make: (path: string) => Promise<number>): Promise<void> {
    const path = join(dir, file.name);
    const existing = await sizeOf(path);
    if (existing !== null && expected !== null && existing === expected) {
      results.push({ name: file.name, path, bytes: existing, written: false });
      return;
    }
    const bytes = await make(path);
    results.push({ name: file.name, path, bytes, written: true });
  }

  // (a) OME-TIFF, 3 channels × 7 z × 30 t, uncompressed; planes in XYZCT order.
  {
    const f = DEMO_FILES.omeStack;
    const seed = 101;
    const scene = makeScene({ width: SIZE, height: SIZE, sizeZ: f.sizeZ, sizeT: f.sizeT, channels: DEMO_CHANNELS, cellCount: 40, overBrightCells: 3, seed, response });
    const options: TiffWriteOptions = {
      ...base,
      description: demoOmeXml({ name: f.title, sizeX: SIZE, sizeY: SIZE, sizeZ: f.sizeZ, sizeC: f.sizeC, sizeT: f.sizeT }),
    };
    await ensure(f, uncompressedTiffSize(f.sizeZ * f.sizeC * f.sizeT, options), (path) => {
      function* coords() {
        for (let t = 0; t < f.sizeT; t++) for (let c = 0; c < f.sizeC; c++) for (let z = 0; z < f.sizeZ; z++) yield { c, z, t };
      }
      return writeTiffFile(path, options, scenePlanes(scene, seed, coords()));
    });
  }

  // (b) Plain TIFF, no OME-XML: nuclear + mitochondrial stains, 20 time points, Deflate + predictor.
  {
    const f = DEMO_FILES.plainStack;
    const seed = 202;
    const channels = [DEMO_CHANNELS[0], DEMO_CHANNELS[2]];
    const scene = makeScene({ width: SIZE, height: SIZE, sizeZ: 1, sizeT: f.sizeT, channels, cellCount: 30, overBrightCells: 2, seed, response });
    const options: TiffWriteOptions = { ...base, compression: "deflate", compress: (b) => deflateSync(b), predictor: true };
    await ensure(f, recorded[f.name] ?? null, (path) => {
      function* coords() {
        for (let t = 0; t < f.sizeT; t++) for (let c = 0; c < f.sizeC; c++) yield { c, z: 0, t };
      }
      return writeTiffFile(path, options, scenePlanes(scene, seed, coords()));
    });
  }

  // (c) Flat-field and dark master frames: a uniform slide at half of full scale through the same optics, and the shutter closed.
  {
    const flatLevel = 0.5 * saturationElectrons(DEMO_CAMERA);
    const flat = DEMO_FILES.flatField;
    await ensure(flat, uncompressedTiffSize(1, base), (path) =>
      writeTiffFile(path, base, [masterFrame(response.map((r) => r * flatLevel), DEMO_CAMERA, planeRandom(303, 0), MASTER_FRAMES)]),
    );
    const dark = DEMO_FILES.darkFrame;
    await ensure(dark, uncompressedTiffSize(1, base), (path) =>
      writeTiffFile(path, base, [masterFrame(new Float32Array(SIZE * SIZE), DEMO_CAMERA, planeRandom(404, 0), MASTER_FRAMES)]),
    );
  }

  // (d) Photon-transfer series (EMVA 1288 mean–variance method); the page order is in the description.
  {
    const f = DEMO_FILES.photonTransfer;
    const sat = saturationElectrons(DEMO_CAMERA);
    const description = JSON.stringify({
      kind: "photon-transfer series (invented camera)",
      pageOrder: f.pageOrder,
      exposureMs: [0, ...PHOTON_TRANSFER_FRACTIONS.map((x) => Math.round(x * FULL_SCALE_EXPOSURE_MS * 1000) / 1000)],
    });
    const options: TiffWriteOptions = { ...base, description };
    await ensure(f, uncompressedTiffSize(f.sizeT, options), (path) =>
      writeTiffFile(
        path,
        options,
        photonTransferFrames({ width: SIZE, height: SIZE, levelsE: PHOTON_TRANSFER_FRACTIONS.map((x) => x * sat), camera: DEMO_CAMERA, seed: 505 }),
      ),
    );
  }

  await writeFile(
    join(dir, MANIFEST_NAME),
    JSON.stringify(
      {
        note: "Invented demo data (lib/imaging/synthetic.ts); camera truth below is what a photon-transfer fit should find.",
        camera: DEMO_CAMERA,
        files: results.map((r) => {
          const file = Object.values(DEMO_FILES).find((f) => f.name === r.name) as DemoFile;
          return { ...file, bytes: r.bytes };
        }),
      },
      null,
      2,
    ),
  );
  return results;
}
