// Regions in the bench worker: statistics on the current plane (raw, corrected, photoelectrons),
// line profiles, and traces over t and z with progress and cancel, through the same comlink client
// as the browser uses. Expected numbers are computed here independently, pixel by pixel.
import { MessageChannel } from "node:worker_threads";
import { expose, transfer } from "comlink";
import { afterEach, describe, expect, test } from "vitest";
import { BenchWorkerClient, type BenchEndpoint } from "@/lib/client/use-bench-worker";
import { bufferSource, type ByteSource } from "@/lib/tiff/byte-source";
import { readTiffStructure } from "@/lib/tiff/structure";
import { writeTiff } from "@/lib/tiff/writer";
import { cancellable, createBenchApi, transferringRenders, type BenchOpenArgs, type BenchPlaneRef } from "@/workers/bench-api";

const W = 10;
const H = 8;
const SZ = 2;
const ST = 6;
const C = 2;
const CEILING = 4095;
// Plane (c, z, t) holds 100 + 7·i + 50·t + 5·z + 1000·c at pixel i; channel 1 at t 3 is saturated at pixel 11.
const value = (c: number, z: number, t: number, i: number) => (c === 1 && t === 3 && i === 11 ? CEILING : 100 + 7 * i + 50 * t + 5 * z + 1000 * c);

async function dataset() {
  const refs: Omit<BenchPlaneRef, "ifdOffset">[] = [];
  const planes: Uint16Array[] = [];
  for (let t = 0; t < ST; t++)
    for (let z = 0; z < SZ; z++)
      for (let c = 0; c < C; c++) {
        refs.push({ ifdIndex: planes.length, c, z, t });
        planes.push(Uint16Array.from({ length: W * H }, (_, i) => value(c, z, t, i)));
      }
  const bytes = await writeTiff(planes, { width: W, height: H, bitsPerSample: 16 });
  const structure = await readTiffStructure(bufferSource(bytes));
  const flat = await writeTiff([Uint16Array.from({ length: W * H }, (_, i) => (i % 2 ? 1100 : 2100))], { width: W, height: H, bitsPerSample: 16 });
  const dark = await writeTiff([new Uint16Array(W * H).fill(100)], { width: W, height: H, bitsPerSample: 16 });
  const files = new Map([["/data", bytes], ["/flat", flat], ["/dark", dark]]);
  const openSource = async (url: string): Promise<ByteSource> => bufferSource(files.get(url)!);
  const open: BenchOpenArgs = {
    datasetId: 3,
    fileUrl: "/data",
    planes: refs.map((r) => ({ ...r, ifdOffset: structure.ifds[r.ifdIndex].offset })),
    width: W,
    height: H,
    ceiling: CEILING,
  };
  const offsetOf = async (b: Uint8Array) => (await readTiffStructure(bufferSource(b))).ifds[0].offset;
  return { openSource, open, flatOffset: await offsetOf(flat), darkOffset: await offsetOf(dark) };
}

const clients: BenchWorkerClient[] = [];
afterEach(() => clients.splice(0).forEach((c) => c.terminate()));

async function connect() {
  const d = await dataset();
  const client = new BenchWorkerClient(() => {
    const { port1, port2 } = new MessageChannel();
    expose(transferringRenders(cancellable(createBenchApi({ openSource: d.openSource })), transfer), port1 as unknown as BenchEndpoint);
    return Object.assign(port2 as unknown as BenchEndpoint, { terminate: () => (port1.close(), port2.close()) });
  });
  clients.push(client);
  await client.open(d.open);
  return Object.assign(client, { frames: { flat: { fileUrl: "/flat", ifdOffset: d.flatOffset, width: W, height: H }, dark: { fileUrl: "/dark", ifdOffset: d.darkOffset, width: W, height: H } } });
}

// The 3 × 2 rectangle at x 2…4, y 1…2: pixels 12 13 14 22 23 24.
const rect = { kind: "rect" as const, x: 2, y: 1, width: 3, height: 2 };
const RECT_PIXELS = [12, 13, 14, 22, 23, 24];
const bgRect = { kind: "rect" as const, x: 0, y: 0, width: 2, height: 1 }; // pixels 0, 1

describe("region statistics in the worker", () => {
  test("measure a rectangle on the current plane, per channel, with area in µm²", async () => {
    const client = await connect();
    const [r] = await client.regionStats(1, 4, [{ id: 9, shape: rect }], undefined, { pixelSizeUm: { x: 0.5, y: 0.5 } });
    expect(r.unit).toBe("DN");
    for (const ch of r.channels) {
      const vals = RECT_PIXELS.map((i) => value(ch.c, 1, 4, i));
      const mean = vals.reduce((a, b) => a + b) / vals.length;
      expect(ch.stats).toMatchObject({ areaPx: 6, areaUm2: 1.5, count: 6, mean, min: Math.min(...vals), max: Math.max(...vals), sum: mean * 6, countAtCeiling: 0 });
    }
  });

  test("count saturated pixels inside a region, and give photoelectrons with a detector profile", async () => {
    const client = await connect();
    const [r] = await client.regionStats(0, 3, [{ id: 1, shape: { kind: "rect", x: 0, y: 1, width: 2, height: 1 } }], undefined, { channels: [1], detector: { offsetDn: 100, gainDnPerE: 2 } });
    expect(r.unit).toBe("e⁻");
    // Pixels 10 and 11 of channel 1 at t 3: 100 + 70 + 150 + 1000 = 1320 and the ceiling.
    expect(r.channels[0].stats?.countAtCeiling).toBe(1);
    expect(r.channels[0].stats?.mean).toBe(((1320 + CEILING) / 2 - 100) / 2);
  });

  test("give a line profile of nearest pixels at unit steps", async () => {
    const client = await connect();
    const [r] = await client.regionStats(0, 0, [{ id: "l", shape: { kind: "line", x1: 1.5, y1: 2.5, x2: 5.5, y2: 2.5 } }], undefined, { channels: [0] });
    expect(r.channels[0].profile?.value).toEqual([21, 22, 23, 24, 25].map((i) => value(0, 0, 0, i)));
  });

  test("measure corrected values when a flat/dark correction is set", async () => {
    const client = await connect();
    await client.setCorrection(client.frames);
    const [r] = await client.regionStats(0, 0, [{ id: 1, shape: rect }], undefined, { channels: [0] });
    expect(r.unit).toBe("DN (corrected)");
    // flat − dark is 2000 at even pixels and 1000 at odd ones; its mean is 1500.
    const expected = RECT_PIXELS.map((i) => Math.fround(((value(0, 0, 0, i) - 100) / (i % 2 ? 1000 : 2000)) * 1500));
    expect(r.channels[0].stats?.mean).toBeCloseTo(expected.reduce((a, b) => a + b) / 6, 3);
  });
});

describe("traces in the worker", () => {
  test("trace a region's mean and sum over t with the background subtracted, reporting progress", async () => {
    const client = await connect();
    const progress: number[] = [];
    const result = await client.trace(
      { shape: rect, background: bgRect, axis: "t", fixed: 1, length: ST, channels: [0, 1] },
      { onProgress: (done, total) => progress.push(done / total) },
    );
    expect(result.areaPx).toBe(6);
    expect(result.points.map((p) => p.t)).toEqual([0, 1, 2, 3, 4, 5]);
    for (const p of result.points) {
      for (const ch of p.channels) {
        const vals = RECT_PIXELS.map((i) => value(ch.c, 1, p.t, i));
        const bg = (value(ch.c, 1, p.t, 0) + value(ch.c, 1, p.t, 1)) / 2;
        const mean = vals.reduce((a, b) => a + b) / 6;
        expect(ch.mean).toBeCloseTo(mean - bg, 9);
        expect(ch.sum).toBeCloseTo(mean * 6 - bg * 6, 9);
        expect(ch.background).toBe(bg);
      }
    }
    // Progress messages arrive before the result (same port, in order) and end at 1.
    await new Promise((r) => setTimeout(r, 10));
    expect(progress.at(-1)).toBe(1);
  });

  test("trace over z at a fixed t", async () => {
    const client = await connect();
    const result = await client.trace({ shape: rect, axis: "z", fixed: 2, length: SZ, channels: [0] });
    expect(result.points.map((p) => [p.z, p.t])).toEqual([[0, 2], [1, 2]]);
    expect(result.points[1].channels[0].mean - result.points[0].channels[0].mean).toBe(5);
  });

  test("cancel a trace through its AbortSignal", async () => {
    const client = await connect();
    const controller = new AbortController();
    const running = client.trace({ shape: rect, axis: "t", fixed: 0, length: ST, channels: [0, 1] }, {
      signal: controller.signal,
      onProgress: () => controller.abort(),
    });
    controller.abort();
    await expect(running).rejects.toMatchObject({ name: "AbortError" });
  });
});
