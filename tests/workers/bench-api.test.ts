import { MessageChannel } from "node:worker_threads";
import { expose, transfer } from "comlink";
import { afterEach, describe, expect, test } from "vitest";
import { BenchWorkerClient, type BenchEndpoint } from "@/lib/client/use-bench-worker";
import { bufferSource, type ByteSource } from "@/lib/tiff/byte-source";
import { readTiffStructure } from "@/lib/tiff/structure";
import { writeTiff } from "@/lib/tiff/writer";
import { cancellable, createBenchApi, renderLayers, transferringRenders, type BenchOpenArgs, type BenchPlaneRef, type ChannelView } from "@/workers/bench-api";

const W = 24;
const H = 16;
const CEILING = 4095;

/** Known 12-bit values per (c, z, t, pixel): distinct across planes, with zeros and ceilings. */
function value(c: number, z: number, t: number, i: number): number {
  if (i === 0) return 0;
  if (i === 1) return CEILING;
  return (i * 13 + c * 1000 + z * 100 + t * 10) % CEILING;
}

/** Writes a C × Z × T stack in XYCZT order and returns it with the plane index an ingest would store. */
async function stack(C: number, Z: number, T: number, override?: (c: number, z: number, t: number, px: Uint16Array) => void) {
  const planes: Uint16Array[] = [];
  const refs: Omit<BenchPlaneRef, "ifdOffset">[] = [];
  for (let t = 0; t < T; t++) {
    for (let z = 0; z < Z; z++) {
      for (let c = 0; c < C; c++) {
        const px = Uint16Array.from({ length: W * H }, (_, i) => value(c, z, t, i));
        override?.(c, z, t, px);
        refs.push({ ifdIndex: planes.length, c, z, t });
        planes.push(px);
      }
    }
  }
  const bytes = await writeTiff(planes, { width: W, height: H, bitsPerSample: 16, rowsPerStrip: 5 });
  const structure = await readTiffStructure(bufferSource(bytes));
  const index: BenchPlaneRef[] = refs.map((r) => ({ ...r, ifdOffset: structure.ifds[r.ifdIndex].offset }));
  const header = { littleEndian: structure.littleEndian, bigTiff: structure.bigTiff, firstIfdOffset: structure.firstIfdOffset };
  return { bytes, planes, index, header };
}

/** A source factory over bytes in memory that counts reads and bytes, and can hold reads until released. */
function counted(bytes: Uint8Array) {
  const log = { reads: 0, bytes: 0, abortedReads: 0 };
  let gate: Promise<void> | null = null;
  let release = () => {};
  const inner = bufferSource(bytes);
  const source: ByteSource = {
    size: inner.size,
    async read(offset, length, signal) {
      log.reads++;
      log.bytes += length;
      if (gate) {
        const held = gate;
        await new Promise<void>((resolve, reject) => {
          signal?.addEventListener("abort", () => {
            log.abortedReads++;
            reject(signal.reason);
          });
          void held.then(resolve);
        });
      }
      return inner.read(offset, length, signal);
    },
  };
  return {
    log,
    openSource: async () => source,
    hold() {
      gate = new Promise<void>((r) => (release = r));
    },
    release() {
      gate = null;
      release();
    },
  };
}

const openArgs = (s: Awaited<ReturnType<typeof stack>>, datasetId = 1): BenchOpenArgs => ({
  datasetId,
  fileUrl: "/api/datasets/1/file",
  header: s.header,
  planes: s.index,
  width: W,
  height: H,
  ceiling: CEILING,
});

const channel = (c: number, black: number, white: number, colour: [number, number, number], visible = true): ChannelView => ({
  c,
  visible,
  black,
  white,
  colour,
});

/** Resolves once `ready()` holds; polls because reads start after a few microtasks and timers. */
async function until(ready: () => boolean): Promise<void> {
  for (let i = 0; i < 500 && !ready(); i++) await new Promise((r) => setTimeout(r, 2));
  if (!ready()) throw new Error("condition not reached within 1 s");
}

const px = (rgba: Uint8ClampedArray, x: number, y: number) => Array.from(rgba.subarray((y * W + x) * 4, (y * W + x) * 4 + 4));

describe("bench api", () => {
  test("raw values at a pixel equal what was written, for every channel", async () => {
    const s = await stack(3, 2, 2);
    const api = createBenchApi({ openSource: counted(s.bytes).openSource });
    await api.open(openArgs(s));
    for (const [z, t, x, y] of [
      [0, 0, 0, 0],
      [1, 0, 1, 0],
      [1, 1, 5, 7],
      [0, 1, W - 1, H - 1],
    ]) {
      const i = y * W + x;
      expect(await api.readValues(z, t, x, y)).toEqual([0, 1, 2].map((c) => ({ c, value: value(c, z, t, i) })));
    }
  });

  test("readValues refuses a pixel outside the image", async () => {
    const s = await stack(1, 1, 1);
    const api = createBenchApi({ openSource: counted(s.bytes).openSource });
    await api.open(openArgs(s));
    await expect(api.readValues(0, 0, W, 0)).rejects.toThrow(`Pixel (${W}, 0) is outside the ${W} × ${H} image`);
  });

  test("renders a known mapping to the expected RGBA, additively and by maximum, leaving hidden channels out", async () => {
    // Pixel (2, 0) is 500 in channel 0, 250 in channel 1 and 4000 in channel 2; pixel (3, 0) is 2000 / 0 / 0.
    const s = await stack(3, 1, 1, (c, _z, _t, p) => {
      p[2] = [500, 250, 4000][c];
      p[3] = [2000, 0, 0][c];
    });
    const api = createBenchApi({ openSource: counted(s.bytes).openSource });
    await api.open(openArgs(s));
    // 500 of 0…1000 → 127.5 → level 128; 250 → 63.75 → 64 (Math.round in mapToLevels).
    const channels = [channel(0, 0, 1000, [200, 100, 0]), channel(1, 0, 1000, [100, 0, 200]), channel(2, 0, 1000, [255, 255, 255], false)];
    const add = await api.renderView({ z: 0, t: 0, channels, composite: "add" });
    expect(add.width).toBe(W);
    expect(add.rgba.length).toBe(W * H * 4);
    // R = 128/255·200 + 64/255·100 = 125.5 → 125; G = 128/255·100 = 50.2 → 50; B = 64/255·200 = 50.2 → 50.
    expect(px(add.rgba, 2, 0)).toEqual([125, 50, 50, 255]);
    // Above the white point saturates to the full colour.
    expect(px(add.rgba, 3, 0)).toEqual([200, 100, 0, 255]);
    const max = await api.renderView({ z: 0, t: 0, channels, composite: "max" });
    expect(px(max.rgba, 2, 0)).toEqual([100, 50, 50, 255]);
    // Making channel 2 visible turns the pixel white-capped in the additive composite.
    const all = await api.renderView({ z: 0, t: 0, channels: channels.map((ch) => ({ ...ch, visible: true })), composite: "add" });
    expect(px(all.rgba, 2, 0)).toEqual([255, 255, 255, 255]);
  });

  test("reports statistics per channel from the raw values, including hidden channels", async () => {
    const s = await stack(2, 1, 1);
    const api = createBenchApi({ openSource: counted(s.bytes).openSource });
    await api.open(openArgs(s));
    const r = await api.renderView({ z: 0, t: 0, channels: [channel(0, 0, 4095, [255, 0, 0]), channel(1, 0, 4095, [0, 255, 0], false)], composite: "add" });
    for (const c of [0, 1]) {
      const values = Array.from({ length: W * H }, (_, i) => value(c, 0, 0, i));
      const mean = values.reduce((a, b) => a + b, 0) / values.length;
      const st = r.channels[c];
      expect(st.c).toBe(c);
      expect(st.min).toBe(Math.min(...values));
      expect(st.max).toBe(Math.max(...values));
      expect(st.mean).toBeCloseTo(mean, 9);
      expect(st.sd).toBeCloseTo(Math.sqrt(values.reduce((a, v) => a + (v - mean) ** 2, 0) / values.length), 9);
      expect(st.countAtCeiling).toBe(values.filter((v) => v === CEILING).length);
      expect(st.countAtZero).toBe(values.filter((v) => v === 0).length);
      // 256 bins over 0…4095 are 16 values wide; every pixel lands in one.
      expect(st.hist.binWidth).toBe(16);
      expect(st.hist.counts.reduce((a, b) => a + b, 0)).toBe(W * H);
      expect(st.hist.counts[0]).toBe(values.filter((v) => v < 16).length);
    }
  });

  test("opening plane k of a 2,000-plane file reads the same bytes as of a 10-plane file", async () => {
    const small = await stack(1, 1, 10);
    const large = await stack(1, 1, 2000);
    const bytesFor = async (s: typeof small, t: number) => {
      const src = counted(s.bytes);
      const api = createBenchApi({ openSource: src.openSource });
      await api.open(openArgs(s));
      const before = { ...src.log };
      await api.renderView({ z: 0, t, channels: [channel(0, 0, 4095, [255, 255, 255])], composite: "add" });
      return { reads: src.log.reads - before.reads, bytes: src.log.bytes - before.bytes };
    };
    const inSmall = await bytesFor(small, 5);
    expect(inSmall.bytes).toBeGreaterThan(W * H * 2);
    // The first plane pays for nothing extra either: the cost does not depend on position.
    expect(await bytesFor(large, 5)).toEqual(inSmall);
    expect(await bytesFor(large, 1999)).toEqual(inSmall);
    // Well under one percent of the file: only the IFD and the strips of that plane were read.
    expect(inSmall.bytes).toBeLessThan(large.bytes.length / 100);
  });

  test("a second render of the same plane decodes and reads nothing", async () => {
    const s = await stack(2, 2, 1);
    const src = counted(s.bytes);
    const api = createBenchApi({ openSource: src.openSource });
    await api.open(openArgs(s));
    const view = { z: 1, t: 0, channels: [channel(0, 0, 4095, [255, 0, 255]), channel(1, 0, 4095, [0, 255, 0])], composite: "add" as const };
    const first = await api.renderView(view);
    const reads = src.log.reads;
    expect(api.counters().decodes).toBe(2);
    // A different mapping of the same planes needs no new decode either.
    const second = await api.renderView({ ...view, channels: view.channels.map((ch) => ({ ...ch, white: 2000 })) });
    expect(src.log.reads).toBe(reads);
    expect(api.counters()).toMatchObject({ decodes: 2, cachedPlanes: 2 });
    expect(second.rgba).not.toEqual(first.rgba);
  });

  test("aborting a stale render rejects with AbortError, cancels its reads and does not poison the cache", async () => {
    const s = await stack(1, 2, 1);
    const src = counted(s.bytes);
    const api = createBenchApi({ openSource: src.openSource });
    await api.open(openArgs(s));
    const view = { z: 1, t: 0, channels: [channel(0, 0, 4095, [255, 255, 255])], composite: "add" as const };
    src.hold();
    const stale = new AbortController();
    const pending = api.renderView(view, stale.signal);
    await until(() => src.log.reads > 0);
    stale.abort();
    await expect(pending).rejects.toMatchObject({ name: "AbortError" });
    expect(src.log.abortedReads).toBe(1);
    src.release();
    expect(api.counters()).toMatchObject({ decodes: 0, cachedPlanes: 0 });
    // The same plane renders afterwards with the written values.
    const r = await api.renderView(view);
    expect(r.channels[0].max).toBe(CEILING);
    expect(await api.readValues(1, 0, 4, 0)).toEqual([{ c: 0, value: value(0, 1, 0, 4) }]);
  });

  test("prefetch fills the cache so playback renders without reading", async () => {
    const s = await stack(2, 1, 5);
    const src = counted(s.bytes);
    const api = createBenchApi({ openSource: src.openSource });
    await api.open(openArgs(s));
    expect(await api.prefetch(0, [1, 2, 3])).toEqual({ planes: 6 });
    const reads = src.log.reads;
    for (const t of [1, 2, 3]) await api.renderView({ z: 0, t, channels: [channel(0, 0, 4095, [255, 0, 0]), channel(1, 0, 4095, [0, 255, 0])], composite: "max" });
    expect(src.log.reads).toBe(reads);
  });

  test("a memory budget smaller than two planes keeps only the latest", async () => {
    const s = await stack(1, 1, 3);
    const src = counted(s.bytes);
    // One plane is 768 bytes of pixels plus its histogram trimmed after the maximum (4096 × 4 bytes).
    const api = createBenchApi({ openSource: src.openSource, budgetBytes: 768 + 4096 * 4 + 100 });
    await api.open(openArgs(s));
    await api.prefetch(0, [0, 1, 2]);
    expect(api.counters()).toMatchObject({ decodes: 3, cachedPlanes: 1 });
    const reads = src.log.reads;
    await api.readValues(0, 2, 0, 0);
    expect(src.log.reads).toBe(reads);
    await api.readValues(0, 0, 0, 0);
    expect(src.log.reads).toBeGreaterThan(reads);
  });

  test("percentiles of one plane come from its exact histogram", async () => {
    // Values 0…383 once each: type-7 percentile p is (n − 1)·p/100.
    const s = await stack(1, 1, 1, (_c, _z, _t, p) => p.forEach((_, i) => (p[i] = i)));
    const api = createBenchApi({ openSource: counted(s.bytes).openSource });
    await api.open(openArgs(s));
    const [p0, p50, p999, p100] = await api.percentiles(0, 0, 0, [0, 50, 99.9, 100]);
    expect([p0, p50, p100]).toEqual([0, 191.5, 383]);
    expect(p999).toBeCloseTo(383 * 0.999, 9);
  });

  test("percentiles over a rectangle use only the pixels inside it (Fit over the visible area)", async () => {
    // Pixel i holds i; the rectangle x 2…5, y 3…4 holds 3·24+2 … 3·24+5 and 4·24+2 … 4·24+5.
    const s = await stack(1, 1, 1, (_c, _z, _t, p) => p.forEach((_, i) => (p[i] = i)));
    const api = createBenchApi({ openSource: counted(s.bytes).openSource });
    await api.open(openArgs(s));
    const inside = [74, 75, 76, 77, 98, 99, 100, 101];
    const [lo, mid, hi] = await api.percentiles(0, 0, 0, [0, 50, 100], undefined, { rect: { x: 2, y: 3, width: 4, height: 2 } });
    // Type 7 on the 8 values (Hyndman & Fan 1996): median between the 4th and 5th = (77 + 98) / 2.
    expect([lo, mid, hi]).toEqual([inside[0], (77 + 98) / 2, inside[7]]);
  });

  test("marks the darkest and brightest percent of pixels from the exact histogram when asked", async () => {
    // Pixel i holds i (384 pixels): 1 % is 3.84 pixels, so values 0, 1, 2 and 381, 382, 383 are marked
    // (whole values only; lib/imaging/clip-marks.ts).
    const s = await stack(1, 1, 1, (_c, _z, _t, p) => p.forEach((_, i) => (p[i] = i)));
    const api = createBenchApi({ openSource: counted(s.bytes).openSource });
    await api.open(openArgs(s));
    const view = {
      z: 0,
      t: 0,
      composite: "add" as const,
      channels: [channel(0, 0, 383, [255, 255, 255])],
      clipMarks: { high: "#ff0000", low: "#0000ff", lowMode: "percent" as const, lowPercent: 1, highPercent: 1 },
    };
    const { rgba } = await api.renderView(view);
    const px = (i: number) => Array.from(rgba.subarray(i * 4, i * 4 + 3));
    expect([px(0), px(2), px(381), px(383)]).toEqual([[0, 0, 255], [0, 0, 255], [255, 0, 0], [255, 0, 0]]);
    // Just outside the marked values: the ordinary grey ramp.
    expect(px(3)).toEqual([2, 2, 2]);
    expect(px(380)).toEqual([253, 253, 253]);
  });

  test("names a missing plane and refuses to work before open or after close", async () => {
    const s = await stack(1, 1, 2);
    const api = createBenchApi({ openSource: counted(s.bytes).openSource });
    await expect(api.readValues(0, 0, 0, 0)).rejects.toThrow("No dataset is open");
    await api.open(openArgs(s));
    await expect(api.renderView({ z: 0, t: 7, channels: [channel(0, 0, 1, [1, 1, 1])], composite: "add" })).rejects.toThrow(
      "no plane for channel 0 at z 0, t 7",
    );
    await api.close();
    await expect(api.readValues(0, 0, 0, 0)).rejects.toThrow("No dataset is open");
  });
});

describe("cancellable worker api", () => {
  test("cancel(id) aborts that request only", async () => {
    const s = await stack(1, 2, 1);
    const src = counted(s.bytes);
    const worker = cancellable(createBenchApi({ openSource: src.openSource }));
    await worker.open(openArgs(s), 1);
    src.hold();
    const view = (z: number) => ({ z, t: 0, channels: [channel(0, 0, 4095, [255, 255, 255])], composite: "add" as const });
    const stale = worker.renderView(view(0), 2);
    const fresh = worker.renderView(view(1), 3);
    // Both IFDs lie in one read-ahead window, so both renders wait on the one metadata read the stale
    // one started; cancelling it must not fail the fresh render, which fetches the window again.
    await until(() => src.log.reads >= 1);
    worker.cancel(2);
    await expect(stale).rejects.toMatchObject({ name: "AbortError" });
    src.release();
    expect((await fresh).z).toBe(1);
    // Cancelling a finished request is a no-op.
    expect(() => worker.cancel(3)).not.toThrow();
  });
});

describe("bench worker client over comlink", () => {
  // The worker entry's composition (bench.worker.ts) exposed on one end of a MessageChannel, the
  // client on the other: the same messages, clones and transfers as with a real Worker.
  const clients: BenchWorkerClient[] = [];
  afterEach(() => clients.splice(0).forEach((c) => c.terminate()));

  function connect(bytes: Uint8Array) {
    const src = counted(bytes);
    const moved: ArrayBuffer[] = [];
    const recordTransfer = <T,>(value: T, list: Transferable[]) => (moved.push(...(list as ArrayBuffer[])), transfer(value, list));
    const client = new BenchWorkerClient(() => {
      const { port1, port2 } = new MessageChannel();
      expose(transferringRenders(cancellable(createBenchApi({ openSource: src.openSource })), recordTransfer), port1 as unknown as BenchEndpoint);
      return Object.assign(port2 as unknown as BenchEndpoint, { terminate: () => (port1.close(), port2.close()) });
    });
    clients.push(client);
    return { client, src, moved };
  }

  test("renders across the channel with the same pixels and raw values as a direct call", async () => {
    const s = await stack(2, 1, 1);
    const { client, moved } = connect(s.bytes);
    const view = { z: 0, t: 0, channels: [channel(0, 0, 3000, [255, 0, 0]), channel(1, 100, 2000, [0, 0, 255])], composite: "add" as const };
    await client.open(openArgs(s));
    const got = await client.render(view);
    const direct = createBenchApi({ openSource: counted(s.bytes).openSource });
    await direct.open(openArgs(s));
    expect(got.rgba).toEqual((await direct.renderView(view)).rgba);
    expect(got.rgba).toBeInstanceOf(Uint8ClampedArray);
    // Moved, not copied: the worker's buffer is detached once posted.
    expect(moved).toHaveLength(1);
    expect(moved[0].byteLength).toBe(0);
    expect(await client.readValues(0, 0, 1, 0)).toEqual([
      { c: 0, value: CEILING },
      { c: 1, value: CEILING },
    ]);
  });

  test("a newer render aborts the older one (scrubbing) and the worker cancels its reads", async () => {
    const s = await stack(1, 3, 1);
    const { client, src } = connect(s.bytes);
    await client.open(openArgs(s));
    src.hold();
    const view = (z: number) => ({ z, t: 0, channels: [channel(0, 0, 4095, [255, 255, 255])], composite: "add" as const });
    const reads = src.log.reads;
    const first = client.render(view(0));
    await until(() => src.log.reads > reads);
    const second = client.render(view(2));
    await expect(first).rejects.toMatchObject({ name: "AbortError" });
    // The cancel message reaches the worker after the rejection here.
    await until(() => src.log.abortedReads === 1);
    src.release();
    expect((await second).z).toBe(2);
  });

  test("re-throws a worker error with what the bench was doing", async () => {
    const s = await stack(1, 1, 2);
    const { client } = connect(s.bytes);
    await client.open(openArgs(s));
    const failed = client.render({ z: 3, t: 12, channels: [channel(0, 0, 1, [1, 1, 1])], composite: "add" });
    await expect(failed).rejects.toMatchObject({ name: "BenchWorkerError" });
    await expect(failed).rejects.toThrow("while rendering z 3, t 12: The dataset has no plane for channel 0 at z 3, t 12");
  });

  test("a worker started again after terminate() is given the open dataset before anything else", async () => {
    // As after a remount or a development hot reload: the page still thinks the dataset is open.
    const s = await stack(2, 1, 1);
    const { client } = connect(s.bytes);
    const view = { z: 0, t: 0, channels: [channel(0, 0, 3000, [255, 0, 0]), channel(1, 100, 2000, [0, 0, 255])], composite: "add" as const };
    await client.open(openArgs(s));
    const before = await client.render(view);
    client.terminate();
    const after = await client.render(view);
    expect(after.rgba).toEqual(before.rgba);
    expect(await client.readValues(0, 0, 1, 0)).toEqual([
      { c: 0, value: CEILING },
      { c: 1, value: CEILING },
    ]);
    // A closed dataset is not opened again.
    await client.close();
    client.terminate();
    await expect(client.render(view)).rejects.toThrow("No dataset is open on the bench");
  });

  test("terminating rejects calls still waiting with AbortError", async () => {
    const s = await stack(1, 1, 1);
    const { client, src } = connect(s.bytes);
    await client.open(openArgs(s));
    src.hold();
    const waiting = client.readValues(0, 0, 0, 0);
    client.terminate();
    await expect(waiting).rejects.toMatchObject({ name: "AbortError" });
    src.release();
  });
});

describe("renderLayers", () => {
  test("with no visible channel draws opaque black", () => {
    expect(Array.from(renderLayers([], 2, "max"))).toEqual([0, 0, 0, 255, 0, 0, 0, 255]);
  });
});
