// The bench's pixel pipeline, as plain functions over a ByteSource: decode a plane by its stored IFD
// offset (through a byte-budgeted cache), histogram + statistics, map and composite to RGBA. The
// worker entry (bench.worker.ts) only exposes this over comlink, so Node tests call the same code.
import { statsFromHistogram, histogram16, type HistogramStats } from "../lib/imaging/histogram";
import { clipMarkRgbaLut } from "../lib/imaging/clip-marks";
import { findTable, singleHueTable } from "../lib/imaging/colour-tables";
import { compositeAdd, compositeMax } from "../lib/imaging/composite";
import { simulateCvd, type CvdKind } from "../lib/imaging/cvd";
import { buildLut, buildRgbaLut, packRgba } from "../lib/imaging/lut";
import { percentiles as percentilesFromHistogram } from "../lib/imaging/percentile";
import { PlaneCache } from "../lib/imaging/plane-cache";
import { compactHistogram, type CompactHistogram } from "../lib/imaging/summary";
import type { ByteSource } from "../lib/tiff/byte-source";
import { decodePlane } from "../lib/tiff/decode";
import { httpSource } from "../lib/tiff/http-source";
import { readTiffHeader, type TiffHeader } from "../lib/tiff/structure";

/** One row of the plane index (GET /api/datasets/[id]/planes). */
export interface BenchPlaneRef {
  ifdIndex: number;
  /** Byte offset of the plane's IFD, stored at ingest: the plane opens without walking the chain. */
  ifdOffset: number;
  c: number;
  z: number;
  t: number;
}

export interface BenchOpenArgs {
  datasetId: number | string;
  /** The datasets file endpoint (Range reads; may redirect to a presigned URL). */
  fileUrl: string;
  /** File size in bytes when known; saves one request. */
  size?: number;
  /** TIFF header stored at ingest; saves one read. */
  header?: TiffHeader;
  planes: readonly BenchPlaneRef[];
  width: number;
  height: number;
  /** Highest raw value the detector can produce (e.g. 4095 for 12 bits). */
  ceiling: number;
  /** Bins of the compact histogram returned with each render, over 0 … ceiling. Default 256. */
  histogramBins?: number;
}

export interface ChannelView {
  c: number;
  visible: boolean;
  /** Raw counts mapped to display level 0 and 255. */
  black: number;
  white: number;
  /** Display colour, 0…255 each: a single-hue ramp from black to this colour. */
  colour: [number, number, number];
  gamma?: number;
  /** A built-in colour table instead of the single-hue ramp. */
  tableId?: string | null;
}

export interface BenchView {
  z: number;
  t: number;
  /** Every channel listed is decoded and gets statistics; only visible ones are drawn. */
  channels: readonly ChannelView[];
  composite: "add" | "max";
  clipMarks?: { high: string; low: string } | null;
  cvd?: CvdKind | null;
}

export interface ChannelPlaneStats extends Omit<HistogramStats, "countAtCeiling"> {
  c: number;
  ifdIndex: number;
  median: number;
  countAtCeiling: number;
  hist: CompactHistogram;
}

export interface BenchRender {
  z: number;
  t: number;
  width: number;
  height: number;
  /** Row-major RGBA, 4 bytes per pixel; its buffer is transferred to the main thread. */
  rgba: Uint8ClampedArray;
  channels: ChannelPlaneStats[];
}

export interface RawValue {
  c: number;
  /** The stored count, never a display level. */
  value: number;
}

export interface BenchCounters {
  /** Planes decoded since creation (cache misses that completed). */
  decodes: number;
  cacheHits: number;
  cachedPlanes: number;
  cachedBytes: number;
}

export type OpenSource = (url: string, options: { size?: number; signal?: AbortSignal }) => Promise<ByteSource>;

export interface BenchApiOptions {
  /** Where bytes come from; HTTP range reads by default, a buffer or counting wrapper in tests. */
  openSource?: OpenSource;
  /** Memory for decoded planes and their histograms, bytes. Default 512 MiB. */
  budgetBytes?: number;
}

/** A decoded plane with its exact histogram (trimmed after the maximum) and statistics. */
interface CachedPlane {
  data: Uint8Array | Uint16Array;
  hist: Uint32Array;
  stats: HistogramStats;
}

interface Session {
  args: BenchOpenArgs;
  source: ByteSource;
  header: TiffHeader;
  byPosition: Map<string, BenchPlaneRef>;
  channels: number[];
  /** Aborted by close(), so a render still running for a closed dataset stops. */
  controller: AbortController;
}

export class BenchError extends Error {
  override name = "BenchError";
}

const DEFAULT_BUDGET = 512 * 1024 * 1024;

const position = (c: number, z: number, t: number) => `${c}/${z}/${t}`;

function throwIfAborted(signal?: AbortSignal): void {
  if (signal?.aborted) throw signal.reason instanceof Error ? signal.reason : new DOMException("Aborted", "AbortError");
}

function both(a: AbortSignal | undefined, b: AbortSignal): AbortSignal {
  return a ? AbortSignal.any([a, b]) : b;
}

export interface RenderLayer {
  pixels: Uint8Array | Uint16Array;
  black: number;
  white: number;
  colour: readonly [number, number, number];
  /** Non-linear display only when set and not 1 (level = 255·t^gamma). */
  gamma?: number;
  /** A built-in colour table (lib/imaging/colour-tables.ts); otherwise a ramp from black to `colour`. */
  tableId?: string | null;
}

export interface RenderOptions {
  ceiling: number;
  /** Pixels at the ceiling in `high`, at or below the black point in `low` (hex colours). */
  clipMarks?: { high: string; low: string } | null;
  cvd?: CvdKind | null;
}

/**
 * The render step: each channel's raw value → RGBA through one 65,536-entry table (level table of
 * lut.ts fused with its colour table, clipping marks written in), blended additively with per-lane
 * saturation or by per-lane maximum (composite.ts), then an optional colour-vision simulation.
 */
export function renderLayers(layers: readonly RenderLayer[], length: number, mode: "add" | "max", options: RenderOptions = { ceiling: 65535 }): Uint8ClampedArray {
  const ceiling = Math.min(65535, Math.max(1, Math.round(options.ceiling)));
  const out = new Uint32Array(length);
  const channels = layers.map((l) => {
    const white = Math.max(l.white, l.black + 1);
    const lut = buildLut({ black: l.black, white, gamma: l.gamma }, Math.max(ceiling, Math.ceil(white)));
    const table = (l.tableId && findTable(l.tableId)) || singleHueTable([l.colour[0], l.colour[1], l.colour[2]]);
    let rgbaLut = buildRgbaLut(lut, table);
    if (options.clipMarks) rgbaLut = clipMarkRgbaLut(rgbaLut, { highFrom: ceiling, lowTo: Math.floor(l.black) }, options.clipMarks.high, options.clipMarks.low);
    return { pixels: l.pixels, rgbaLut };
  });
  if (channels.length === 0) out.fill(packRgba(0, 0, 0, 255));
  else if (mode === "add") compositeAdd(channels, out);
  else compositeMax(channels, out);
  const rgba = new Uint8ClampedArray(out.buffer);
  return options.cvd ? simulateCvd(rgba, options.cvd) : rgba;
}

export interface BenchApi {
  open(args: BenchOpenArgs, signal?: AbortSignal): Promise<{ planes: number; channels: number[]; size: number }>;
  renderView(view: BenchView, signal?: AbortSignal): Promise<BenchRender>;
  readValues(z: number, t: number, x: number, y: number, signal?: AbortSignal): Promise<RawValue[]>;
  /** Decodes the planes of these time points (all channels, or those given) into the cache. */
  prefetch(z: number, ts: readonly number[], signal?: AbortSignal, channels?: readonly number[]): Promise<{ planes: number }>;
  /** Exact percentiles (percent) of one plane from its integer histogram: Fit over "this plane". */
  percentiles(z: number, t: number, c: number, ps: readonly number[], signal?: AbortSignal): Promise<number[]>;
  counters(): BenchCounters;
  close(): Promise<void>;
}

export function createBenchApi(options: BenchApiOptions = {}): BenchApi {
  const openSource: OpenSource = options.openSource ?? ((url, o) => httpSource(url, o));
  const cache = new PlaneCache<CachedPlane>({
    budgetBytes: options.budgetBytes ?? DEFAULT_BUDGET,
    sizeOf: (p) => p.data.byteLength + p.hist.byteLength,
  });
  let decodes = 0;
  let session: Session | null = null;

  function current(): Session {
    if (!session) throw new BenchError("No dataset is open on the bench");
    return session;
  }

  function planeAt(s: Session, c: number, z: number, t: number): BenchPlaneRef {
    const ref = s.byPosition.get(position(c, z, t));
    if (!ref) throw new BenchError(`The dataset has no plane for channel ${c} at z ${z}, t ${t}`);
    return ref;
  }

  function load(s: Session, ref: BenchPlaneRef, signal: AbortSignal): Promise<CachedPlane> {
    return cache.get(
      { datasetId: s.args.datasetId, ifdIndex: ref.ifdIndex },
      async (loadSignal) => {
        const plane = await decodePlane(s.source, ref.ifdOffset, { header: s.header, signal: loadSignal });
        const where = `plane ${ref.ifdIndex} (channel ${ref.c}, z ${ref.z}, t ${ref.t})`;
        if (plane.width !== s.args.width || plane.height !== s.args.height) {
          throw new BenchError(`${where} is ${plane.width} × ${plane.height} pixels; the dataset says ${s.args.width} × ${s.args.height}`);
        }
        if (plane.data instanceof Float32Array) throw new BenchError(`${where} holds 32-bit float values, which the bench does not show yet`);
        throwIfAborted(loadSignal);
        const full = histogram16(plane.data);
        const stats = statsFromHistogram(full, s.args.ceiling);
        // Bins above the maximum are all zero; dropping them saves up to 256 KiB per plane.
        const hist = full.slice(0, Number.isNaN(stats.max) ? 1 : stats.max + 1);
        decodes++;
        return { data: plane.data, hist, stats };
      },
      signal,
    );
  }

  async function close(): Promise<void> {
    if (!session) return;
    session.controller.abort(new DOMException("The dataset was closed", "AbortError"));
    cache.clear(session.args.datasetId);
    session = null;
  }

  function channelStats(s: Session, ref: BenchPlaneRef, p: CachedPlane): ChannelPlaneStats {
    const { stats } = p;
    return {
      ...stats,
      c: ref.c,
      ifdIndex: ref.ifdIndex,
      median: percentilesFromHistogram(p.hist, [50], stats.count)[0],
      countAtCeiling: stats.countAtCeiling ?? 0,
      hist: compactHistogram(p.hist, s.args.ceiling, s.args.histogramBins ?? 256),
    };
  }

  return {
    async open(args, signal) {
      await close();
      for (const [name, v] of [["width", args.width], ["height", args.height]] as const) {
        if (!Number.isInteger(v) || v < 1) throw new BenchError(`${name} must be a whole number ≥ 1, got ${v}`);
      }
      if (!Number.isInteger(args.ceiling) || args.ceiling < 1 || args.ceiling > 65535) {
        throw new BenchError(`The ceiling must be a whole number 1…65535, got ${args.ceiling}`);
      }
      const byPosition = new Map<string, BenchPlaneRef>();
      for (const p of args.planes) {
        const k = position(p.c, p.z, p.t);
        if (byPosition.has(k)) throw new BenchError(`The plane index lists channel ${p.c}, z ${p.z}, t ${p.t} twice`);
        byPosition.set(k, p);
      }
      const source = await openSource(args.fileUrl, { size: args.size, signal });
      const header = args.header ?? (await readTiffHeader(source, signal));
      session = {
        args,
        source,
        header,
        byPosition,
        channels: [...new Set(args.planes.map((p) => p.c))].sort((a, b) => a - b),
        controller: new AbortController(),
      };
      return { planes: byPosition.size, channels: session.channels, size: source.size };
    },

    async renderView(view, signal) {
      const s = current();
      const sig = both(signal, s.controller.signal);
      const refs = view.channels.map((ch) => planeAt(s, ch.c, view.z, view.t));
      const loaded = await Promise.all(refs.map((ref) => load(s, ref, sig)));
      throwIfAborted(sig);
      const length = s.args.width * s.args.height;
      const layers = view.channels.flatMap((ch, i) =>
        ch.visible ? [{ pixels: loaded[i].data, black: ch.black, white: ch.white, colour: ch.colour, gamma: ch.gamma, tableId: ch.tableId }] : [],
      );
      const rgba = renderLayers(layers, length, view.composite, { ceiling: s.args.ceiling, clipMarks: view.clipMarks, cvd: view.cvd });
      return {
        z: view.z,
        t: view.t,
        width: s.args.width,
        height: s.args.height,
        rgba,
        channels: refs.map((ref, i) => channelStats(s, ref, loaded[i])),
      };
    },

    async readValues(z, t, x, y, signal) {
      const s = current();
      if (!Number.isInteger(x) || !Number.isInteger(y) || x < 0 || y < 0 || x >= s.args.width || y >= s.args.height) {
        throw new BenchError(`Pixel (${x}, ${y}) is outside the ${s.args.width} × ${s.args.height} image`);
      }
      const sig = both(signal, s.controller.signal);
      const refs = s.channels.map((c) => planeAt(s, c, z, t));
      const loaded = await Promise.all(refs.map((ref) => load(s, ref, sig)));
      return refs.map((ref, i) => ({ c: ref.c, value: loaded[i].data[y * s.args.width + x] }));
    },

    async prefetch(z, ts, signal, channels) {
      const s = current();
      const sig = both(signal, s.controller.signal);
      const refs = ts.flatMap((t) => (channels ?? s.channels).map((c) => planeAt(s, c, z, t)));
      // Every load is joined before this returns to the event loop, so a newer prefetch that
      // shares planes can start before the older one is cancelled without losing them. Reads are
      // issued in the order of `ts`: the nearest frame first.
      await Promise.all(refs.map((ref) => load(s, ref, sig)));
      return { planes: refs.length };
    },

    async percentiles(z, t, c, ps, signal) {
      const s = current();
      const p = await load(s, planeAt(s, c, z, t), both(signal, s.controller.signal));
      return percentilesFromHistogram(p.hist, ps, p.stats.count);
    },

    counters() {
      return { decodes, cacheHits: cache.counters.hits, cachedPlanes: cache.size, cachedBytes: cache.bytes };
    },

    close,
  };
}

/**
 * The API the worker exposes. An AbortSignal cannot be posted to a worker, so each cancellable
 * call carries a request id chosen by the caller and `cancel(id)` aborts it on this side. Messages
 * on one port arrive in order, so a cancel always follows the call it names.
 */
export interface BenchWorkerApi {
  open(args: BenchOpenArgs, requestId?: number): Promise<{ planes: number; channels: number[]; size: number }>;
  renderView(view: BenchView, requestId?: number): Promise<BenchRender>;
  readValues(z: number, t: number, x: number, y: number, requestId?: number): Promise<RawValue[]>;
  prefetch(z: number, ts: readonly number[], requestId?: number, channels?: readonly number[]): Promise<{ planes: number }>;
  percentiles(z: number, t: number, c: number, ps: readonly number[], requestId?: number): Promise<number[]>;
  cancel(requestId: number): void;
  counters(): BenchCounters;
  close(): Promise<void>;
}

export function cancellable(api: BenchApi): BenchWorkerApi {
  const running = new Map<number, AbortController>();

  async function withRequest<T>(requestId: number | undefined, run: (signal?: AbortSignal) => Promise<T>): Promise<T> {
    if (requestId === undefined) return run();
    const controller = new AbortController();
    running.set(requestId, controller);
    try {
      return await run(controller.signal);
    } finally {
      running.delete(requestId);
    }
  }

  return {
    open: (args, id) => withRequest(id, (s) => api.open(args, s)),
    renderView: (view, id) => withRequest(id, (s) => api.renderView(view, s)),
    readValues: (z, t, x, y, id) => withRequest(id, (s) => api.readValues(z, t, x, y, s)),
    prefetch: (z, ts, id, channels) => withRequest(id, (s) => api.prefetch(z, ts, s, channels)),
    percentiles: (z, t, c, ps, id) => withRequest(id, (s) => api.percentiles(z, t, c, ps, s)),
    cancel(requestId) {
      running.get(requestId)?.abort(new DOMException("Superseded by a newer request", "AbortError"));
    },
    counters: () => api.counters(),
    close: () => api.close(),
  };
}

/** Marks each render's pixel buffer for transfer (comlink's `transfer`), so it is moved, not copied. */
export function transferringRenders(api: BenchWorkerApi, transfer: <T>(value: T, transferables: Transferable[]) => T): BenchWorkerApi {
  return {
    ...api,
    async renderView(view, requestId) {
      const r = await api.renderView(view, requestId);
      return transfer(r, [r.rgba.buffer as ArrayBuffer]);
    },
  };
}
