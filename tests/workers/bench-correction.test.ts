// Flat/dark correction for display on the worker side of the bench. Formula checked by hand:
// corrected = (raw − dark) / (flat − dark) × mean(flat − dark) — Murphy & Davidson, "Fundamentals of
// Light Microscopy and Electronic Imaging", flat-field correction (shared/reference/FACTS.md,
// "Correction"); pixels where flat − dark ≤ epsilon are invalid, not divided.
import { MessageChannel } from "node:worker_threads";
import { expose, transfer } from "comlink";
import { max, mean, min, quantile } from "d3-array";
import { afterEach, describe, expect, test, vi } from "vitest";
import { BenchWorkerClient, type BenchEndpoint } from "@/lib/client/use-bench-worker";
import { bufferSource, type ByteSource } from "@/lib/tiff/byte-source";
import { readTiffStructure } from "@/lib/tiff/structure";
import { writeTiff } from "@/lib/tiff/writer";
import {
  cancellable,
  createBenchApi,
  DEFAULT_EPSILON,
  transferringRenders,
  type BenchOpenArgs,
  type BenchPlaneRef,
  type BenchView,
  type ChannelView,
  type CorrectionArgs,
  type CorrectionFrameRef,
} from "@/workers/bench-api";

// Every plane the bench decodes, as returned to it: the very arrays its cache holds.
const seen = vi.hoisted(() => ({ planes: [] as { data: Uint8Array | Uint16Array | Float32Array }[] }));
vi.mock("@/lib/tiff/decode", async (importOriginal) => {
  const actual = await importOriginal<typeof import("@/lib/tiff/decode")>();
  return {
    ...actual,
    decodePlane: async (...args: Parameters<typeof actual.decodePlane>) => {
      const plane = await actual.decodePlane(...args);
      seen.planes.push(plane);
      return plane;
    },
  };
});

const W = 8;
const H = 5;
const N = W * H;
const CEILING = 4095;

const at = (x: number, y: number) => y * W + x;
// Known pixels: B is an ordinary one (flat − dark = 1000), A has half the gain (flat − dark = 500),
// the invalid ones have flat = dark (twice) or flat below dark.
const B = { x: 0, y: 0 };
const A = { x: 3, y: 1 };
const INVALID = [at(5, 0), at(4, 2), at(1, 4)];
const SATURATED = at(7, 0); // channel 1 at the ceiling
const BELOW_DARK = at(2, 0); // channel 1 below the dark level: a negative corrected value

const dark = Uint16Array.from({ length: N }, (_, i) => 100 + (i % 4));
const flat = Uint16Array.from({ length: N }, (_, i) => dark[i] + 1000);
flat[at(A.x, A.y)] = dark[at(A.x, A.y)] + 500;
flat[INVALID[0]] = dark[INVALID[0]];
flat[INVALID[1]] = dark[INVALID[1]];
flat[INVALID[2]] = dark[INVALID[2]] - 7;

const raw0 = Uint16Array.from({ length: N }, (_, i) => dark[i] + 200 + 13 * i);
raw0[at(A.x, A.y)] = dark[at(A.x, A.y)] + 250;
const raw1 = Uint16Array.from({ length: N }, (_, i) => dark[i] + ((i * 29) % 900));
raw1[SATURATED] = CEILING;
raw1[BELOW_DARK] = 90;
const RAW = [raw0, raw1];

/** 37 valid pixels: 36 with flat − dark = 1000 and A with 500. */
const HAND_SCALE = (36 * 1000 + 500) / 37;

/** The corrected plane computed here, independently of the bench: doubles, stored as float32 like the bench. */
function expectedCorrected(raw: Uint16Array, epsilon = DEFAULT_EPSILON): Float32Array {
  let sum = 0;
  let valid = 0;
  for (let i = 0; i < N; i++) {
    const d = flat[i] - dark[i];
    if (d > epsilon) {
      sum += d;
      valid++;
    }
  }
  return Float32Array.from({ length: N }, (_, i) => {
    const d = flat[i] - dark[i];
    return d > epsilon ? ((raw[i] - dark[i]) / d) * (sum / valid) : NaN;
  });
}

async function tiffOf(planes: Uint16Array[], width = W, height = H) {
  const bytes = await writeTiff(planes, { width, height, bitsPerSample: 16, rowsPerStrip: 2 });
  const structure = await readTiffStructure(bufferSource(bytes));
  return { bytes, offsets: structure.ifds.map((d) => d.offset), header: { littleEndian: structure.littleEndian, bigTiff: structure.bigTiff, firstIfdOffset: structure.firstIfdOffset } };
}

/** The dataset (2 channels, one z and t), a flat, a dark and a 12 × 9 flat, served by URL; reads of frames can be held. */
async function lab() {
  const data = await tiffOf(RAW);
  const flatFile = await tiffOf([flat]);
  const darkFile = await tiffOf([dark]);
  const bigFlat = await tiffOf([new Uint16Array(12 * 9).fill(2000)], 12, 9);
  const files = new Map<string, Uint8Array>([
    ["/data", data.bytes],
    ["/flat", flatFile.bytes],
    ["/dark", darkFile.bytes],
    ["/big-flat", bigFlat.bytes],
  ]);
  let gate: Promise<void> | null = null;
  let release = () => {};
  const openSource = async (url: string): Promise<ByteSource> => {
    const bytes = files.get(url);
    if (!bytes) throw new Error(`no file ${url}`);
    const inner = bufferSource(bytes);
    return {
      size: inner.size,
      async read(offset, length, signal) {
        if (gate && url !== "/data") {
          const held = gate;
          await new Promise<void>((resolve, reject) => {
            signal?.addEventListener("abort", () => reject(signal.reason));
            void held.then(resolve);
          });
        }
        return inner.read(offset, length, signal);
      },
    };
  };
  const index: BenchPlaneRef[] = [0, 1].map((c) => ({ ifdIndex: c, ifdOffset: data.offsets[c], c, z: 0, t: 0 }));
  const open: BenchOpenArgs = { datasetId: 7, fileUrl: "/data", header: data.header, planes: index, width: W, height: H, ceiling: CEILING };
  const frame = (fileUrl: string, ifdOffset: number, width = W, height = H): CorrectionFrameRef => ({ fileUrl, ifdOffset, width, height });
  const frames: CorrectionArgs = { flat: frame("/flat", flatFile.offsets[0]), dark: frame("/dark", darkFile.offsets[0]) };
  return {
    openSource,
    open,
    frames,
    bigFlat: frame("/big-flat", bigFlat.offsets[0], 12, 9),
    hold() {
      gate = new Promise<void>((r) => (release = r));
    },
    release() {
      gate = null;
      release();
    },
  };
}

async function openBench() {
  const l = await lab();
  const api = createBenchApi({ openSource: l.openSource });
  await api.open(l.open);
  return { ...l, api };
}

const channel = (c: number, black: number, white: number, visible = true, colour: [number, number, number] = [255, 255, 255]): ChannelView => ({
  c,
  visible,
  black,
  white,
  colour,
});

const view = (channels: ChannelView[], extra: Partial<BenchView> = {}): BenchView => ({ z: 0, t: 0, channels, composite: "add", ...extra });

const px = (rgba: Uint8ClampedArray, i: number) => Array.from(rgba.subarray(i * 4, i * 4 + 4));

/** FNV-1a over the bytes of a typed array. */
function checksum(a: ArrayBufferView): number {
  const bytes = new Uint8Array(a.buffer, a.byteOffset, a.byteLength);
  let h = 0x811c9dc5;
  for (const b of bytes) h = Math.imul(h ^ b, 0x01000193) >>> 0;
  return h;
}

describe("bench flat/dark correction", () => {
  test("corrected values at known pixels equal the hand computation (Murphy & Davidson flat-field correction); raw values stay raw", async () => {
    const { api, frames } = await openBench();
    const rawBefore = await api.readValues(0, 0, A.x, A.y);
    expect(rawBefore).toEqual([
      { c: 0, value: dark[at(A.x, A.y)] + 250 },
      { c: 1, value: raw1[at(A.x, A.y)] },
    ]);
    const info = await api.setCorrection(frames);
    expect(info).toEqual({ invalid: 3, scale: HAND_SCALE, epsilon: DEFAULT_EPSILON });
    // (raw − dark) / (flat − dark) × mean(flat − dark): at A, 250 / 500 × 36,500 / 37 ≈ 493.24.
    const [a0] = await api.readValues(0, 0, A.x, A.y);
    expect(a0.value).toBe(dark[at(A.x, A.y)] + 250);
    expect(a0.corrected).toBeCloseTo((250 / 500) * (36500 / 37), 3);
    expect(a0.corrected).toBeCloseTo(493.2432, 3);
    // At B, raw 300 over dark 100: 200 / 1000 × 36,500 / 37 ≈ 197.30.
    const [b0, b1] = await api.readValues(0, 0, B.x, B.y);
    expect(b0).toEqual({ c: 0, value: 300, corrected: expect.closeTo(197.2973, 3) as number });
    expect(b1.value).toBe(raw1[0]);
    expect(b1.corrected).toBeCloseTo(((raw1[0] - 100) / 1000) * HAND_SCALE, 3);
    // Below the dark level the corrected value is negative, not clipped.
    const [, below] = await api.readValues(0, 0, BELOW_DARK % W, Math.floor(BELOW_DARK / W));
    expect(below.corrected).toBeCloseTo(((90 - dark[BELOW_DARK]) / 1000) * HAND_SCALE, 3);
    expect(below.corrected).toBeLessThan(0);
  });

  test("pixels where flat − dark ≤ epsilon are invalid: null in the readout, counted, drawn in the invalid colour", async () => {
    const { api, frames } = await openBench();
    await api.setCorrection(frames);
    for (const i of INVALID) {
      const values = await api.readValues(0, 0, i % W, Math.floor(i / W));
      expect(values).toEqual([
        { c: 0, value: raw0[i], corrected: null },
        { c: 1, value: raw1[i], corrected: null },
      ]);
    }
    // Two visible channels blended additively: the invalid colour is exact, not doubled.
    const both = [channel(0, 0, 1000, true, [255, 0, 255]), channel(1, 0, 1000, true, [0, 255, 0])];
    const r = await api.renderView(view(both, { correction: true, invalidColour: "#123456" }));
    for (const i of INVALID) expect(px(r.rgba, i)).toEqual([0x12, 0x34, 0x56, 255]);
    expect(px(r.rgba, 0)).not.toEqual([0x12, 0x34, 0x56, 255]);
    expect(r.channels.map((s) => s.invalid)).toEqual([3, 3]);
    // The default invalid colour is mid grey; under "max" too.
    const grey = await api.renderView(view(both, { correction: true, composite: "max" }));
    for (const i of INVALID) expect(px(grey.rgba, i)).toEqual([128, 128, 128, 255]);
    // A larger epsilon marks A (flat − dark = 500) invalid as well.
    expect(await api.setCorrection({ ...frames, epsilon: 600 })).toMatchObject({ invalid: 4, scale: 1000 });
    expect((await api.readValues(0, 0, A.x, A.y))[0].corrected).toBeNull();
    const r600 = await api.renderView(view(both, { correction: true }));
    expect(r600.channels[0].invalid).toBe(4);
    expect(px(r600.rgba, at(A.x, A.y))).toEqual([128, 128, 128, 255]);
  });

  test("black and white points apply to corrected values, with clipping marks for raw saturation and at or below black", async () => {
    const { api, frames } = await openBench();
    await api.setCorrection(frames);
    const one = [channel(0, 0, 1000)];
    const raw = await api.renderView(view(one));
    const corrected = await api.renderView(view(one, { correction: true }));
    // Grey ramp: level = round(255 · (v − black) / (white − black)). B: raw 300 → 76.5 → 77; corrected 197.30 → 50.3 → 50.
    expect(px(raw.rgba, 0)).toEqual([77, 77, 77, 255]);
    const level = (v: number) => Math.floor((255 * v) / 1000 + 0.5);
    expect(level((200 / 1000) * HAND_SCALE)).toBe(50);
    expect(px(corrected.rgba, 0)).toEqual([50, 50, 50, 255]);
    // A: corrected 493.24 → 125.8 → 126 (raw 353 gives 90).
    expect(px(corrected.rgba, at(A.x, A.y))).toEqual([126, 126, 126, 255]);
    expect(px(raw.rgba, at(A.x, A.y))).toEqual([90, 90, 90, 255]);
    const marks = await api.renderView(view([channel(1, 0, 1000)], { correction: true, clipMarks: { high: "#FF0000", low: "#0000FF" } }));
    expect(px(marks.rgba, SATURATED)).toEqual([255, 0, 0, 255]);
    expect(px(marks.rgba, BELOW_DARK)).toEqual([0, 0, 255, 255]);
    expect(px(marks.rgba, INVALID[0])).toEqual([128, 128, 128, 255]);
  });

  test("stats and percentiles are of the corrected values (d3-array on the same corrected array)", async () => {
    const { api, frames } = await openBench();
    await api.setCorrection(frames);
    const r = await api.renderView(view([channel(0, 0, 1000), channel(1, 0, 1000, false)], { correction: true }));
    for (const c of [0, 1]) {
      const values = Array.from(expectedCorrected(RAW[c])).filter((v) => !Number.isNaN(v));
      const st = r.channels[c];
      const m = mean(values) as number;
      expect(st).toMatchObject({ c, corrected: true, invalid: 3, count: 37 });
      expect(st.min).toBe(min(values));
      expect(st.max).toBe(max(values));
      expect(st.mean).toBeCloseTo(m, 6);
      expect(st.sd).toBeCloseTo(Math.sqrt(values.reduce((s, v) => s + (v - m) ** 2, 0) / values.length), 6);
      expect(st.median).toBe(quantile(values, 0.5));
      // The histogram spans the corrected range and holds every valid pixel.
      expect(st.hist.start).toBe(min(values));
      expect(st.hist.counts).toHaveLength(256);
      expect(st.hist.binWidth).toBeCloseTo(((max(values) as number) - (min(values) as number)) / 256, 9);
      expect(st.hist.counts.reduce((a, b) => a + b, 0)).toBe(37);
      // Saturation and zero stay properties of the raw counts.
      expect(st.countAtCeiling).toBe(c === 1 ? 1 : 0);
      const ps = [0, 0.1, 25, 50, 99.9, 100];
      const got = await api.percentiles(0, 0, c, ps);
      expect(got).toEqual(ps.map((p) => quantile(values, p / 100)));
    }
    expect(r.channels[1].min).toBeLessThan(0);
    // Raw on request: from the integer histogram, as without correction.
    const rawValues = Array.from(raw0);
    const [p50, p999] = await api.percentiles(0, 0, 0, [50, 99.9], undefined, { corrected: false });
    expect(p50).toBeCloseTo(quantile(rawValues, 0.5) as number, 9);
    expect(p999).toBeCloseTo(quantile(rawValues, 0.999) as number, 9);
  });

  test("a frame of another size is a clear error and leaves the correction as it was", async () => {
    const { api, frames, bigFlat } = await openBench();
    await expect(api.setCorrection({ ...frames, flat: bigFlat })).rejects.toThrow("The flat-field frame is 12 × 9; this dataset is 8 × 5");
    await expect(api.setCorrection({ ...frames, dark: { ...bigFlat, width: 16 } })).rejects.toThrow("The dark frame is 16 × 9; this dataset is 8 × 5");
    // A frame whose stored size is wrong is caught when decoded.
    await expect(api.setCorrection({ ...frames, flat: { ...bigFlat, width: W, height: H } })).rejects.toThrow(
      "The flat-field frame's file holds a 12 × 9 plane at that offset; this dataset is 8 × 5",
    );
    expect((await api.readValues(0, 0, 0, 0))[0]).toEqual({ c: 0, value: 300 });
    await api.setCorrection(frames);
    await expect(api.setCorrection({ ...frames, flat: bigFlat })).rejects.toThrow("12 × 9");
    expect((await api.readValues(0, 0, 0, 0))[0].corrected).toBeCloseTo(197.2973, 3);
    // The dark frame picked as the flat too: flat − dark ≤ epsilon everywhere.
    await expect(api.setCorrection({ flat: frames.dark, dark: frames.dark })).rejects.toThrow("nothing can be corrected");
    await expect(api.setCorrection({ ...frames, epsilon: -1 })).rejects.toThrow("epsilon must be a finite number ≥ 0");
  });

  test("turning correction off (null or the view flag) restores raw rendering, stats, percentiles and readout", async () => {
    const { api, frames } = await openBench();
    const v = view([channel(0, 100, 1500), channel(1, 50, 900)]);
    const before = await api.renderView(v);
    const beforeP = await api.percentiles(0, 0, 1, [0.1, 99.9]);
    expect(before.channels[0].corrected).toBeUndefined();
    await api.setCorrection(frames);
    const on = await api.renderView({ ...v, correction: true });
    expect(on.rgba).not.toEqual(before.rgba);
    // Frames set but the view flag off: the raw view.
    const flagOff = await api.renderView(v);
    expect(flagOff.rgba).toEqual(before.rgba);
    expect(flagOff.channels).toEqual(before.channels);
    await api.setCorrection(null);
    const after = await api.renderView({ ...v, correction: true });
    expect(after.rgba).toEqual(before.rgba);
    expect(after.channels).toEqual(before.channels);
    expect(await api.percentiles(0, 0, 1, [0.1, 99.9])).toEqual(beforeP);
    expect(await api.readValues(0, 0, 0, 0)).toEqual([
      { c: 0, value: 300 },
      { c: 1, value: raw1[0] },
    ]);
    await expect(api.percentiles(0, 0, 0, [50], undefined, { corrected: true })).rejects.toThrow("No flat-field and dark frame are set");
  });

  test("the raw planes in the cache are never modified, and corrected planes are cached beside them and dropped with their frames", async () => {
    seen.planes.length = 0;
    const { api, frames } = await openBench();
    await api.prefetch(0, [0]);
    const rawPlanes = seen.planes.slice();
    expect(rawPlanes.map((p) => Array.from(p.data))).toEqual(RAW.map((r) => Array.from(r)));
    const sums = rawPlanes.map((p) => checksum(p.data));
    expect(api.counters()).toMatchObject({ decodes: 2, cachedPlanes: 2 });
    await api.setCorrection(frames);
    const v = view([channel(0, 0, 1000), channel(1, 0, 1000)], { correction: true, clipMarks: { high: "#FF0000", low: "#0000FF" }, cvd: "deuteranopia" });
    await api.renderView(v);
    await api.readValues(0, 0, A.x, A.y);
    await api.percentiles(0, 0, 1, [1, 50]);
    // Two raw planes, two frames and two corrected planes; the raw planes were not decoded again.
    expect(api.counters()).toMatchObject({ decodes: 4, cachedPlanes: 6 });
    expect(rawPlanes.map((p) => checksum(p.data))).toEqual(sums);
    expect(rawPlanes.map((p) => Array.from(p.data))).toEqual(RAW.map((r) => Array.from(r)));
    await api.setCorrection(null);
    expect(api.counters().cachedPlanes).toBe(4);
    await api.close();
    expect(api.counters().cachedPlanes).toBe(0);
  });

  test("a newer setCorrection wins over an older one still loading its frames", async () => {
    const l = await lab();
    const api = createBenchApi({ openSource: l.openSource });
    await api.open(l.open);
    l.hold();
    const slow = api.setCorrection(l.frames);
    expect(await api.setCorrection(null)).toBeNull();
    l.release();
    await expect(slow).rejects.toMatchObject({ name: "AbortError" });
    expect((await api.readValues(0, 0, 0, 0))[0]).toEqual({ c: 0, value: 300 });
  });
});

describe("bench flat/dark correction through the worker client", () => {
  const clients: BenchWorkerClient[] = [];
  afterEach(() => clients.splice(0).forEach((c) => c.terminate()));

  test("setCorrection, corrected renders, readout and percentiles cross the channel", async () => {
    const l = await lab();
    const client = new BenchWorkerClient(() => {
      const { port1, port2 } = new MessageChannel();
      expose(transferringRenders(cancellable(createBenchApi({ openSource: l.openSource })), transfer), port1 as unknown as BenchEndpoint);
      return Object.assign(port2 as unknown as BenchEndpoint, { terminate: () => (port1.close(), port2.close()) });
    });
    clients.push(client);
    await client.open(l.open);
    await expect(client.setCorrection({ ...l.frames, flat: l.bigFlat })).rejects.toThrow(
      "while loading the flat-field and dark frames: The flat-field frame is 12 × 9; this dataset is 8 × 5",
    );
    expect(await client.setCorrection(l.frames)).toMatchObject({ invalid: 3 });
    const [b0] = await client.readValues(0, 0, B.x, B.y);
    expect(b0.value).toBe(300);
    expect(b0.corrected).toBeCloseTo(197.2973, 3);
    const r = await client.render(view([channel(0, 0, 1000)], { correction: true }));
    expect(r.channels[0]).toMatchObject({ corrected: true, invalid: 3 });
    expect(px(r.rgba, INVALID[0])).toEqual([128, 128, 128, 255]);
    const values = Array.from(expectedCorrected(raw0)).filter((v) => !Number.isNaN(v));
    expect(await client.percentiles(0, 0, 0, [0.1, 99.9])).toEqual([quantile(values, 0.1 / 100), quantile(values, 99.9 / 100)]);
    expect(await client.percentiles(0, 0, 0, [100], undefined, { corrected: false })).toEqual([max(Array.from(raw0))]);
    expect(await client.setCorrection(null)).toBeNull();
    expect((await client.readValues(0, 0, B.x, B.y))[0]).toEqual({ c: 0, value: 300 });
  });
});
