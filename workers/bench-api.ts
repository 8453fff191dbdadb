// The bench's pixel pipeline, as plain functions over a ByteSource: decode a plane by its stored IFD
// offset (through a byte-budgeted cache), histogram + statistics, map and composite to RGBA. The
// worker entry (bench.worker.ts) only exposes this over comlink, so Node tests call the same code.
//
// Flat/dark correction for display (setCorrection + BenchView.correction): corrected = (raw − dark)
// / (flat − dark) × mean(flat − dark) in floating point (Murphy & Davidson, "Fundamentals of Light
// Microscopy and Electronic Imaging", flat-field correction; shared/reference/FACTS.md), through
// lib/imaging/correction.ts. Corrected planes are separate Float32Arrays kept in the same budgeted
// cache under their own keys; the decoded raw planes are only read, and nothing is written back.
import { statsFromHistogram, histogram16, type HistogramStats } from "../lib/imaging/histogram";
import { bottomPercentTo, clipMarkRgbaLut, topPercentFrom, type ClipThresholds } from "../lib/imaging/clip-marks";
import { findTable, parseHex, singleHueTable, TABLE_SIZE, type ColourTable } from "../lib/imaging/colour-tables";
import { addSaturate, compositeAdd, compositeMax, maxLanes } from "../lib/imaging/composite";
import { flatDarkCorrect, floatHistogram, floatPercentiles, mapFloatToRgba } from "../lib/imaging/correction";
import { regionHistogram, type ImageRect } from "../lib/imaging/fit";
import { simulateCvd, type CvdKind } from "../lib/imaging/cvd";
import { buildLut, buildRgbaLut, packRgba } from "../lib/imaging/lut";
import { percentiles as percentilesFromHistogram } from "../lib/imaging/percentile";
import { PlaneCache } from "../lib/imaging/plane-cache";
import { wasmKernelsAvailable } from "../lib/imaging/wasm/kernels";
import { lineProfile, regionMask, regionStats, statsInElectrons, traceInElectrons, tracePoint, type AreaShape, type DetectorScale, type RegionShape, type RegionStats } from "../lib/imaging/regions";
import { compactHistogram, type CompactHistogram } from "../lib/imaging/summary";
import { readAheadSource, type ByteSource } from "../lib/tiff/byte-source";
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

/**
 * Clipping marks: `high` colour on pixels at the ceiling (and, with `highPercent`, on the brightest
 * that many percent), `low` colour on pixels at or below the black point, or with lowMode "percent"
 * on the darkest `lowPercent` percent. Percentages come from the plane's exact histogram and never
 * split pixels of equal value.
 */
export interface ClipMarkSettings {
  high: string;
  low: string;
  lowMode?: "black" | "percent";
  lowPercent?: number;
  highPercent?: number;
}

export interface BenchView {
  z: number;
  t: number;
  /** Every channel listed is decoded and gets statistics; only visible ones are drawn. */
  channels: readonly ChannelView[];
  composite: "add" | "max";
  clipMarks?: ClipMarkSettings | null;
  cvd?: CvdKind | null;
  /**
   * Show flat/dark-corrected values (needs setCorrection with frames; without them the view is raw
   * and the stats carry no `corrected` flag). Black and white points are then corrected values.
   */
  correction?: boolean;
  /** "#RRGGBB" for pixels whose correction is invalid (flat − dark ≤ epsilon). Default DEFAULT_INVALID_COLOUR. */
  invalidColour?: string;
}

/** Where the histogram of corrected values starts: its bins cover start + i·binWidth … start + (i+1)·binWidth. */
export interface ChannelHistogram extends CompactHistogram {
  /** Lower edge of bin 0; absent (0) for raw counts. */
  start?: number;
}

export interface ChannelPlaneStats extends Omit<HistogramStats, "countAtCeiling"> {
  c: number;
  ifdIndex: number;
  median: number;
  /**
   * Raw pixels at the ceiling (and `countAtZero`: raw pixels at 0), also on a corrected view:
   * saturation is a property of the measurement, not of the corrected value.
   */
  countAtCeiling: number;
  hist: ChannelHistogram;
  /**
   * Present on a corrected view: count, min, max, mean, sd, median and hist are of the corrected
   * values of the valid pixels (hist over their min … max, in `histogramBins` equal bins).
   */
  corrected?: true;
  /** Pixels whose correction is invalid (flat − dark ≤ epsilon); present on a corrected view. */
  invalid?: number;
}

export interface BenchRender {
  z: number;
  t: number;
  width: number;
  height: number;
  /** Row-major RGBA, 4 bytes per pixel; its buffer is transferred to the main thread. */
  rgba: Uint8ClampedArray;
  channels: ChannelPlaneStats[];
  /** Where the channels were composited: the WebAssembly kernels, or the JavaScript loops without them. */
  kernels: "webassembly" | "javascript";
}

export interface RawValue {
  c: number;
  /** The stored count, never a display level. */
  value: number;
  /** The flat/dark-corrected value when a correction is set; null where it is invalid. */
  corrected?: number | null;
}

/** One plane of a flat-field or dark frame: a dataset of the lab, opened by its stored IFD offset. */
export interface CorrectionFrameRef {
  /** The datasets file endpoint of the frame's dataset. */
  fileUrl: string;
  size?: number;
  ifdOffset: number;
  /** The frame's size as stored at ingest; must equal the open dataset's. */
  width: number;
  height: number;
}

export interface CorrectionArgs {
  flat: CorrectionFrameRef;
  dark: CorrectionFrameRef;
  /** Pixels with flat − dark ≤ epsilon (counts) are invalid, not divided. Default DEFAULT_EPSILON. */
  epsilon?: number;
}

export interface CorrectionInfo {
  /** Pixels where flat − dark ≤ epsilon. */
  invalid: number;
  /** mean(flat − dark) over the valid pixels: the factor that keeps the original scale. */
  scale: number;
  epsilon: number;
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
  kind: "raw";
  data: Uint8Array | Uint16Array;
  hist: Uint32Array;
  stats: HistogramStats;
}

/** A flat-field or dark frame (a float master flat is allowed). */
interface CachedFrame {
  kind: "frame";
  data: Uint8Array | Uint16Array | Float32Array;
  width: number;
  height: number;
}

/** A corrected plane (NaN where invalid) with the statistics of its valid values. */
interface CorrectedPlane {
  kind: "corrected";
  data: Float32Array;
  stats: Omit<ChannelPlaneStats, "c" | "ifdIndex" | "countAtCeiling" | "countAtZero">;
}

type CacheEntry = CachedPlane | CachedFrame | CorrectedPlane;

interface Correction {
  /** Generation: corrected planes are cached under it, so a new pair of frames never meets old planes. */
  id: number;
  flat: CachedFrame["data"];
  dark: CachedFrame["data"];
  epsilon: number;
  invalid: number;
  scale: number;
}

interface Session {
  args: BenchOpenArgs;
  source: ByteSource;
  /** The same file through readAheadSource: a plane's IFD and tag arrays in one request. */
  metadata: ByteSource;
  header: TiffHeader;
  byPosition: Map<string, BenchPlaneRef>;
  channels: number[];
  /** Aborted by close(), so a render still running for a closed dataset stops. */
  controller: AbortController;
  correction: Correction | null;
  /** Counts setCorrection calls: only the latest may change `correction` (a slow load finishing late must not win). */
  correctionRequests: number;
}

function clampRect(rect: ImageRect, width: number, height: number): ImageRect {
  const x = Math.max(0, Math.min(width - 1, Math.floor(rect.x)));
  const y = Math.max(0, Math.min(height - 1, Math.floor(rect.y)));
  return { x, y, width: Math.max(1, Math.min(width - x, Math.ceil(rect.width))), height: Math.max(1, Math.min(height - y, Math.ceil(rect.height))) };
}

/** The valid (non-NaN) corrected values inside a rectangle. */
function cropFloat(values: Float32Array, width: number, rect: ImageRect): Float32Array {
  const out: number[] = [];
  for (let y = rect.y; y < rect.y + rect.height; y++) {
    for (let x = rect.x; x < rect.x + rect.width; x++) {
      const v = values[y * width + x];
      if (!Number.isNaN(v)) out.push(v);
    }
  }
  return Float32Array.from(out);
}

function unitOf(corrected: boolean, electrons: boolean): RegionUnit {
  return electrons ? (corrected ? "e⁻ (corrected)" : "e⁻") : corrected ? "DN (corrected)" : "DN";
}

export class BenchError extends Error {
  override name = "BenchError";
}

const DEFAULT_BUDGET = 512 * 1024 * 1024;

/**
 * Default epsilon, in counts: half a count. With whole-count frames this marks exactly the pixels
 * where flat ≤ dark (no gain to divide by); a float master flat less than half a count above its
 * dark is treated the same. Callers may raise it to exclude near-dead pixels.
 */
export const DEFAULT_EPSILON = 0.5;

/** Mid grey: differs from black and white and from every saturated channel colour and mark candidate. */
export const DEFAULT_INVALID_COLOUR = "#808080";

const position = (c: number, z: number, t: number) => `${c}/${z}/${t}`;

function throwIfAborted(signal?: AbortSignal): void {
  if (signal?.aborted) throw signal.reason instanceof Error ? signal.reason : new DOMException("Aborted", "AbortError");
}

function both(a: AbortSignal | undefined, b: AbortSignal): AbortSignal {
  return a ? AbortSignal.any([a, b]) : b;
}

/** A lab's own colour table (Colour tables page), known to the worker as "custom-<id>". */
export interface CustomTableRef {
  id: string;
  name: string;
  /** 256 entries × r, g, b (768 bytes). */
  rgb: Uint8Array;
}

// Custom tables registered by the bench, per worker. Built-in ids cannot be shadowed: only
// "custom-<number>" ids are accepted.
const customTables = new Map<string, ColourTable>();

/** Registers (or replaces) custom colour tables so renders can name them by id; returns how many are known. */
export function registerCustomTables(tables: readonly CustomTableRef[]): number {
  for (const t of tables) {
    if (!/^custom-\d+$/.test(t.id)) throw new RangeError(`A custom colour table id looks like "custom-12", got "${t.id}"`);
    if (t.rgb.length !== TABLE_SIZE * 3) throw new RangeError(`Colour table ${t.id} has ${t.rgb.length} bytes, expected ${TABLE_SIZE * 3}`);
    customTables.set(t.id, { id: t.id, name: t.name, kind: "perceptual", rgb: Uint8Array.from(t.rgb) });
  }
  return customTables.size;
}

/** findTable, plus the registered custom tables. */
export function lookupTable(id: string): ColourTable | undefined {
  return customTables.get(id) ?? findTable(id);
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
  /** Where this layer's clipping marks start; default: high at the ceiling, low at the black point. */
  marks?: ClipThresholds;
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
    const table = (l.tableId && lookupTable(l.tableId)) || singleHueTable([l.colour[0], l.colour[1], l.colour[2]]);
    let rgbaLut = buildRgbaLut(lut, table);
    if (options.clipMarks) rgbaLut = clipMarkRgbaLut(rgbaLut, l.marks ?? { highFrom: ceiling, lowTo: Math.floor(l.black) }, options.clipMarks.high, options.clipMarks.low);
    return { pixels: l.pixels, rgbaLut };
  });
  if (channels.length === 0) out.fill(packRgba(0, 0, 0, 255));
  else if (mode === "add") compositeAdd(channels, out);
  else compositeMax(channels, out);
  const rgba = new Uint8ClampedArray(out.buffer);
  return options.cvd ? simulateCvd(rgba, options.cvd) : rgba;
}

export interface CorrectedLayer {
  /** Corrected values, NaN where invalid. */
  values: Float32Array;
  /** The raw plane the values came from: the high clipping mark is raw saturation (raw ≥ ceiling). */
  raw: Uint8Array | Uint16Array;
  /** In corrected units. */
  black: number;
  white: number;
  colour: readonly [number, number, number];
  gamma?: number;
  tableId?: string | null;
}

/**
 * The render step on corrected values: each channel through mapFloatToRgba (level = round(255 ·
 * t^gamma), t = (v − black)/(white − black) clamped), clipping marks (high where the raw value is at
 * the ceiling, low where the corrected value is at or below the black point), the same additive or
 * maximum blend, the optional colour-vision simulation, and finally every invalid pixel (NaN in any
 * layer) painted in `invalidColour` exactly, so blending never turns it into another colour.
 */
export function renderCorrectedLayers(
  layers: readonly CorrectedLayer[],
  length: number,
  mode: "add" | "max",
  options: RenderOptions & { invalidColour?: string },
): Uint8ClampedArray {
  const ceiling = Math.min(65535, Math.max(1, Math.round(options.ceiling)));
  const out = new Uint32Array(length);
  const black = packRgba(0, 0, 0, 255);
  const invalidColour = packRgba(...parseHex(options.invalidColour ?? DEFAULT_INVALID_COLOUR));
  const high = options.clipMarks ? packRgba(...parseHex(options.clipMarks.high)) : 0;
  const low = options.clipMarks ? packRgba(...parseHex(options.clipMarks.low)) : 0;
  const mapped = new Uint32Array(length);
  layers.forEach((l, k) => {
    if (l.values.length < length || l.raw.length < length) throw new RangeError(`A corrected layer holds fewer than ${length} pixels`);
    const white = l.white > l.black ? l.white : l.black + 1;
    const table = (l.tableId && lookupTable(l.tableId)) || singleHueTable([l.colour[0], l.colour[1], l.colour[2]]);
    // Invalid pixels are black here (they add nothing) and painted after the blend.
    mapFloatToRgba(l.values, { black: l.black, white, gamma: l.gamma }, table, mapped, [0, 0, 0]);
    if (options.clipMarks) {
      for (let i = 0; i < length; i++) {
        const v = l.values[i];
        if (v !== v) continue;
        if (l.raw[i] >= ceiling) mapped[i] = high;
        else if (v <= l.black) mapped[i] = low;
      }
    }
    if (k === 0) out.set(mapped.subarray(0, length));
    else if (mode === "add") for (let i = 0; i < length; i++) out[i] = addSaturate(out[i], mapped[i]);
    else for (let i = 0; i < length; i++) out[i] = maxLanes(out[i], mapped[i]);
  });
  if (layers.length === 0) out.fill(black);
  let rgba = new Uint8ClampedArray(out.buffer);
  if (options.cvd) rgba = simulateCvd(rgba, options.cvd);
  if (layers.length > 0) {
    const words = new Uint32Array(rgba.buffer, rgba.byteOffset, length);
    for (const l of layers) {
      for (let i = 0; i < length; i++) if (l.values[i] !== l.values[i]) words[i] = invalidColour;
    }
  }
  return rgba;
}

/** Statistics of corrected values (NaN = invalid): one pass for the range, mean and sd (two-pass), exact median. */
function correctedStats(values: Float32Array, bins: number): CorrectedPlane["stats"] {
  let count = 0;
  let sum = 0;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (v === v) {
      count++;
      sum += v;
    }
  }
  const mean = count > 0 ? sum / count : NaN;
  let squares = 0;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (v === v) squares += (v - mean) * (v - mean);
  }
  const h = floatHistogram(values, { bins });
  const [median] = floatPercentiles(values, [50]);
  return {
    count,
    min: count > 0 ? h.min : NaN,
    max: count > 0 ? h.max : NaN,
    mean,
    sd: count > 0 ? Math.sqrt(squares / count) : NaN,
    median,
    hist: { binWidth: count > 0 ? h.binWidth : 1, counts: Array.from(h.counts), start: count > 0 ? h.min : 0 },
    corrected: true,
    invalid: values.length - count,
  };
}

export interface PercentileOptions {
  /** Corrected values when a flat/dark correction is set (the default then); false forces raw. */
  corrected?: boolean;
  /** Only the pixels inside this rectangle of the image (Fit over the visible area). */
  rect?: ImageRect;
}

export interface BenchApi {
  open(args: BenchOpenArgs, signal?: AbortSignal): Promise<{ planes: number; channels: number[]; size: number }>;
  renderView(view: BenchView, signal?: AbortSignal): Promise<BenchRender>;
  readValues(z: number, t: number, x: number, y: number, signal?: AbortSignal): Promise<RawValue[]>;
  /** Decodes the planes of these time points (all channels, or those given) into the cache. */
  prefetch(z: number, ts: readonly number[], signal?: AbortSignal, channels?: readonly number[]): Promise<{ planes: number }>;
  /**
   * Exact percentiles (percent) of one plane: Fit over "this plane". Raw: from its integer
   * histogram. Corrected (by default whenever a correction is set; `corrected: false` asks for raw):
   * exact type-7 percentiles of the corrected values, invalid pixels left out.
   */
  percentiles(z: number, t: number, c: number, ps: readonly number[], signal?: AbortSignal, options?: PercentileOptions): Promise<number[]>;
  /**
   * Loads a flat-field and a dark frame (one plane each) for this dataset's session, or turns the
   * correction off (null). On failure the previous correction stays as it was.
   */
  setCorrection(args: CorrectionArgs | null, signal?: AbortSignal): Promise<CorrectionInfo | null>;
  /** Region statistics (areas) and line profiles (lines) on one plane, for every listed channel. */
  regionStats(z: number, t: number, regions: readonly RegionRef[], signal?: AbortSignal, options?: RegionOptions): Promise<RegionResult[]>;
  /** A region's mean and sum on every plane along t (at z = fixed) or z (at t = fixed); see TraceRequest. */
  trace(request: TraceRequest, signal?: AbortSignal, onProgress?: (done: number, total: number) => void): Promise<TraceResult>;
  counters(): BenchCounters;
  close(): Promise<void>;
}

// ---- Regions (lib/imaging/regions.ts): statistics, line profiles and traces in the worker ----

export interface RegionRef {
  id: number | string;
  shape: RegionShape;
}

export interface RegionOptions {
  /** Channels to measure; default every channel of the dataset. */
  channels?: readonly number[];
  /** Corrected values when a flat/dark correction is set (the default then); false forces raw. */
  corrected?: boolean;
  /**
   * Report photoelectrons, e = (DN − offset) / K. On corrected values the dark frame has already
   * removed the offset, so e = corrected / K there.
   */
  detector?: DetectorScale | null;
  /** µm per pixel, for areas in µm². */
  pixelSizeUm?: { x: number | null; y: number | null } | null;
}

/** "DN" raw counts, "DN (corrected)" flat/dark corrected, "e⁻" photoelectrons (raw or corrected). */
export type RegionUnit = "DN" | "DN (corrected)" | "e⁻" | "e⁻ (corrected)";

export interface RegionChannelResult {
  c: number;
  /** Areas: statistics on this plane. */
  stats?: RegionStats;
  /** Lines: nearest-pixel values at unit steps (NaN outside the image), and how many samples are saturated. */
  profile?: { distance: number[]; value: number[]; countAtCeiling: number };
}

export interface RegionResult {
  id: number | string;
  unit: RegionUnit;
  channels: RegionChannelResult[];
}

export interface TraceRequest {
  shape: AreaShape;
  /** Background region: its mean per pixel on each plane is subtracted (regions.ts tracePoint). */
  background?: AreaShape | null;
  axis: "t" | "z";
  /** The z of a trace over t, or the t of a trace over z. */
  fixed: number;
  /** How many planes along the axis (sizeT or sizeZ). */
  length: number;
  channels: readonly number[];
  corrected?: boolean;
  detector?: DetectorScale | null;
}

export interface TraceResult {
  axis: "t" | "z";
  unit: RegionUnit;
  /** Pixels inside the region. */
  areaPx: number;
  points: { z: number; t: number; channels: { c: number; mean: number; sum: number; background: number | null; countAtCeiling: number }[] }[];
}

export function createBenchApi(options: BenchApiOptions = {}): BenchApi {
  const openSource: OpenSource = options.openSource ?? ((url, o) => httpSource(url, o));
  const cache = new PlaneCache<CacheEntry>({
    budgetBytes: options.budgetBytes ?? DEFAULT_BUDGET,
    sizeOf: (p) => p.data.byteLength + (p.kind === "raw" ? p.hist.byteLength : p.kind === "corrected" ? 8 * p.stats.hist.counts.length : 0),
  });
  let decodes = 0;
  let session: Session | null = null;
  let generation = 0;

  /** Cache "dataset" ids of the session's frames and corrected planes: prefixed by the dataset's, so close() clears them too. */
  const frameSpace = (s: Session, ref: CorrectionFrameRef) => `${s.args.datasetId}:frame:${ref.fileUrl}@${ref.ifdOffset}`;
  const correctedSpace = (s: Session, corr: Correction) => `${s.args.datasetId}:corrected${corr.id}`;

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
        const plane = await decodePlane(s.source, ref.ifdOffset, { header: s.header, signal: loadSignal, metadataSource: s.metadata });
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
        return { kind: "raw" as const, data: plane.data, hist, stats };
      },
      signal,
    ) as Promise<CachedPlane>;
  }

  async function loadFrame(s: Session, role: string, ref: CorrectionFrameRef, signal: AbortSignal): Promise<CachedFrame> {
    const { width, height } = s.args;
    if (ref.width !== width || ref.height !== height) {
      throw new BenchError(`The ${role} frame is ${ref.width} × ${ref.height}; this dataset is ${width} × ${height}`);
    }
    const key = { datasetId: frameSpace(s, ref), ifdIndex: 0 };
    const frame = (await cache.get(
      key,
      async (loadSignal) => {
        const source = await openSource(ref.fileUrl, { size: ref.size, signal: loadSignal });
        const header = await readTiffHeader(source, loadSignal);
        const plane = await decodePlane(source, ref.ifdOffset, { header, signal: loadSignal });
        throwIfAborted(loadSignal);
        decodes++;
        return { kind: "frame" as const, data: plane.data, width: plane.width, height: plane.height };
      },
      signal,
    )) as CachedFrame;
    if (frame.width !== width || frame.height !== height) {
      cache.delete(key);
      throw new BenchError(`The ${role} frame's file holds a ${frame.width} × ${frame.height} plane at that offset; this dataset is ${width} × ${height}`);
    }
    return frame;
  }

  /** The corrected plane of `ref` under correction `corr`, cached beside (never in place of) the raw plane. */
  function loadCorrected(s: Session, corr: Correction, ref: BenchPlaneRef, signal: AbortSignal): Promise<CorrectedPlane> {
    return cache.get(
      { datasetId: correctedSpace(s, corr), ifdIndex: ref.ifdIndex },
      async (loadSignal) => {
        const raw = await load(s, ref, loadSignal);
        throwIfAborted(loadSignal);
        const data = new Float32Array(raw.data.length);
        flatDarkCorrect(raw.data, corr.flat, corr.dark, data, { epsilon: corr.epsilon });
        return { kind: "corrected" as const, data, stats: correctedStats(data, s.args.histogramBins ?? 256) };
      },
      signal,
    ) as Promise<CorrectedPlane>;
  }

  /** The correction a call uses: `wanted` undefined means "whenever one is set". */
  function correctionFor(s: Session, wanted: boolean | undefined): Correction | null {
    if (wanted === false) return null;
    if (wanted === true && !s.correction) throw new BenchError("No flat-field and dark frame are set for this dataset");
    return s.correction;
  }

  /** The corrected value at pixel i, rounded to float32 like the corrected plane; null where invalid. */
  function correctedAt(corr: Correction, raw: number, i: number): number | null {
    const d = corr.flat[i] - corr.dark[i];
    return d > corr.epsilon ? Math.fround(((raw - corr.dark[i]) / d) * corr.scale) : null;
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
        // One request for a plane's IFD and tag arrays, one for its pixels (lib/tiff/byte-source.ts).
        metadata: readAheadSource(source),
        header,
        byPosition,
        channels: [...new Set(args.planes.map((p) => p.c))].sort((a, b) => a - b),
        controller: new AbortController(),
        correction: null,
        correctionRequests: 0,
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
      const corr = view.correction ? s.correction : null;
      if (corr) {
        // Every listed channel gets corrected statistics (hidden ones too), so a histogram does not
        // switch units when its channel is hidden.
        const corrected = await Promise.all(refs.map((ref) => loadCorrected(s, corr, ref, sig)));
        throwIfAborted(sig);
        const layers = view.channels.flatMap((ch, i) =>
          ch.visible
            ? [{ values: corrected[i].data, raw: loaded[i].data, black: ch.black, white: ch.white, colour: ch.colour, gamma: ch.gamma, tableId: ch.tableId }]
            : [],
        );
        const rgba = renderCorrectedLayers(layers, length, view.composite, {
          ceiling: s.args.ceiling,
          clipMarks: view.clipMarks,
          cvd: view.cvd,
          invalidColour: view.invalidColour,
        });
        return {
          z: view.z,
          t: view.t,
          width: s.args.width,
          height: s.args.height,
          rgba,
          // Corrected values are floating point: they are mapped and combined in JavaScript.
          kernels: "javascript",
          channels: refs.map((ref, i) => ({
            ...corrected[i].stats,
            c: ref.c,
            ifdIndex: ref.ifdIndex,
            countAtZero: loaded[i].stats.countAtZero,
            countAtCeiling: loaded[i].stats.countAtCeiling ?? 0,
          })),
        };
      }
      const marksFor = (i: number, black: number): ClipThresholds | undefined => {
        const m = view.clipMarks;
        if (!m || (m.lowMode !== "percent" && !m.highPercent)) return undefined;
        const hist = loaded[i].hist;
        const highFrom = m.highPercent ? Math.min(s.args.ceiling, topPercentFrom(hist, m.highPercent)) : s.args.ceiling;
        const lowTo = m.lowMode === "percent" ? bottomPercentTo(hist, m.lowPercent ?? 0.1) : Math.floor(black);
        return { highFrom, lowTo };
      };
      const layers = view.channels.flatMap((ch, i) =>
        ch.visible
          ? [{ pixels: loaded[i].data, black: ch.black, white: ch.white, colour: ch.colour, gamma: ch.gamma, tableId: ch.tableId, marks: marksFor(i, ch.black) }]
          : [],
      );
      const rgba = renderLayers(layers, length, view.composite, { ceiling: s.args.ceiling, clipMarks: view.clipMarks, cvd: view.cvd });
      return {
        z: view.z,
        t: view.t,
        width: s.args.width,
        height: s.args.height,
        rgba,
        kernels: wasmKernelsAvailable() ? "webassembly" : "javascript",
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
      const i = y * s.args.width + x;
      const corr = s.correction;
      return refs.map((ref, k) => {
        const value = loaded[k].data[i];
        return corr ? { c: ref.c, value, corrected: correctedAt(corr, value, i) } : { c: ref.c, value };
      });
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

    async percentiles(z, t, c, ps, signal, options) {
      const s = current();
      const sig = both(signal, s.controller.signal);
      const ref = planeAt(s, c, z, t);
      const corr = correctionFor(s, options?.corrected);
      const rect = options?.rect && clampRect(options.rect, s.args.width, s.args.height);
      if (corr) {
        const values = (await loadCorrected(s, corr, ref, sig)).data;
        return floatPercentiles(rect ? cropFloat(values, s.args.width, rect) : values, ps);
      }
      const p = await load(s, ref, sig);
      if (rect) {
        const region = regionHistogram(p.data, s.args.width, rect);
        return percentilesFromHistogram(region.hist, ps, region.total);
      }
      return percentilesFromHistogram(p.hist, ps, p.stats.count);
    },

    async setCorrection(args, signal) {
      const s = current();
      const request = ++s.correctionRequests;
      const drop = () => {
        if (s.correction) cache.clear(correctedSpace(s, s.correction));
      };
      if (args === null) {
        drop();
        s.correction = null;
        return null;
      }
      const epsilon = args.epsilon ?? DEFAULT_EPSILON;
      if (!(Number.isFinite(epsilon) && epsilon >= 0)) throw new BenchError(`epsilon must be a finite number ≥ 0 (counts), got ${epsilon}`);
      const sig = both(signal, s.controller.signal);
      const [flat, dark] = await Promise.all([loadFrame(s, "flat-field", args.flat, sig), loadFrame(s, "dark", args.dark, sig)]);
      throwIfAborted(sig);
      if (request !== s.correctionRequests) throw new DOMException("Superseded by a newer correction", "AbortError");
      // The same arithmetic flatDarkCorrect uses for its scale, so readValues matches the planes.
      let sum = 0;
      let valid = 0;
      for (let i = 0; i < flat.data.length; i++) {
        const d = flat.data[i] - dark.data[i];
        if (d > epsilon) {
          sum += d;
          valid++;
        }
      }
      if (valid === 0) {
        throw new BenchError(`flat − dark is at most ${epsilon} counts at every pixel, so nothing can be corrected; are the flat-field and dark frames swapped?`);
      }
      drop();
      s.correction = { id: ++generation, flat: flat.data, dark: dark.data, epsilon, invalid: flat.data.length - valid, scale: sum / valid };
      return { invalid: s.correction.invalid, scale: s.correction.scale, epsilon };
    },

    async regionStats(z, t, regions, signal, options = {}) {
      const s = current();
      const sig = both(signal, s.controller.signal);
      const { width, height, ceiling } = s.args;
      const corr = correctionFor(s, options.corrected);
      const unit = unitOf(Boolean(corr), Boolean(options.detector));
      const refs = (options.channels ?? s.channels).map((c) => planeAt(s, c, z, t));
      const raw = await Promise.all(refs.map((ref) => load(s, ref, sig)));
      const values = corr ? (await Promise.all(refs.map((ref) => loadCorrected(s, corr, ref, sig)))).map((p) => p.data) : raw.map((p) => p.data);
      throwIfAborted(sig);
      const detector = options.detector ? (corr ? { offsetDn: 0, gainDnPerE: options.detector.gainDnPerE } : options.detector) : null;
      return regions.map((region) => {
        const shape = region.shape;
        if (shape.kind === "line") {
          return {
            id: region.id,
            unit,
            channels: refs.map((ref, k) => {
              const p = lineProfile(values[k], width, height, shape);
              const saturated = lineProfile(raw[k].data, width, height, shape).value.filter((v) => v >= ceiling).length;
              const value = detector ? p.value.map((v) => (v - detector.offsetDn) / detector.gainDnPerE) : p.value;
              return { c: ref.c, profile: { distance: p.distance, value, countAtCeiling: saturated } };
            }),
          };
        }
        const mask = regionMask(shape, width, height);
        return {
          id: region.id,
          unit,
          channels: refs.map((ref, k) => {
            const stats = regionStats(raw[k].data, mask, { ceiling, pixelSizeUm: options.pixelSizeUm, values: corr ? values[k] : undefined });
            return { c: ref.c, stats: detector ? statsInElectrons(stats, detector) : stats };
          }),
        };
      });
    },

    async trace(request, signal, onProgress) {
      const s = current();
      const sig = both(signal, s.controller.signal);
      const { width, height, ceiling } = s.args;
      const corr = correctionFor(s, request.corrected);
      const mask = regionMask(request.shape, width, height);
      const background = request.background ? regionMask(request.background, width, height) : null;
      const detector = request.detector ? (corr ? { offsetDn: 0, gainDnPerE: request.detector.gainDnPerE } : request.detector) : null;
      const points: TraceResult["points"] = [];
      let reported = 0;
      for (let i = 0; i < request.length; i++) {
        throwIfAborted(sig);
        const z = request.axis === "z" ? i : request.fixed;
        const t = request.axis === "t" ? i : request.fixed;
        const refs = request.channels.map((c) => planeAt(s, c, z, t));
        const raw = await Promise.all(refs.map((ref) => load(s, ref, sig)));
        const values = corr ? await Promise.all(refs.map((ref) => loadCorrected(s, corr, ref, sig))) : null;
        points.push({
          z,
          t,
          channels: refs.map((ref, k) => {
            const p = tracePoint(raw[k].data, mask, background, { ceiling, values: values?.[k].data });
            const count = values ? regionStats(raw[k].data, mask, { ceiling, values: values[k].data }).count : mask.length;
            const q = detector ? traceInElectrons(p, count, detector) : p;
            return { c: ref.c, mean: q.mean, sum: q.sum, background: q.background, countAtCeiling: q.countAtCeiling };
          }),
        });
        // Progress at most every 50 ms (each call is a message to the main thread), and at the end.
        const now = Date.now();
        if (onProgress && (now - reported >= 50 || i === request.length - 1)) {
          reported = now;
          void Promise.resolve(onProgress(i + 1, request.length)).catch(() => undefined);
        }
      }
      return { axis: request.axis, unit: unitOf(Boolean(corr), Boolean(detector)), areaPx: mask.length, points };
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
  percentiles(z: number, t: number, c: number, ps: readonly number[], requestId?: number, options?: PercentileOptions): Promise<number[]>;
  setCorrection(args: CorrectionArgs | null, requestId?: number): Promise<CorrectionInfo | null>;
  regionStats(z: number, t: number, regions: RegionRef[], requestId?: number, options?: RegionOptions): Promise<RegionResult[]>;
  /** `onProgress` arrives as a comlink proxy from the main thread. */
  trace(request: TraceRequest, requestId?: number, onProgress?: (done: number, total: number) => void): Promise<TraceResult>;
  registerTables(tables: CustomTableRef[]): number;
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
    percentiles: (z, t, c, ps, id, options) => withRequest(id, (s) => api.percentiles(z, t, c, ps, s, options)),
    setCorrection: (args, id) => withRequest(id, (s) => api.setCorrection(args, s)),
    regionStats: (z, t, regions, id, options) => withRequest(id, (s) => api.regionStats(z, t, regions, s, options)),
    trace: (request, id, onProgress) => withRequest(id, (s) => api.trace(request, s, onProgress)),
    registerTables: (tables) => registerCustomTables(tables),
    cancel(requestId) {
      running.get(requestId)?.abort(new DOMException("Superseded by a newer request", "AbortError"));
    },
    counters: () => api.counters(),
    close: () => api.close(),
  };
}

/** Marks each render's pixel buffer for transfer (comlink's `transfer`), so it is moved, not copied. */
export function transferringRenders<A extends BenchWorkerApi>(api: A, transfer: <T>(value: T, transferables: Transferable[]) => T): A {
  return {
    ...api,
    async renderView(view, requestId) {
      const r = await api.renderView(view, requestId);
      return transfer(r, [r.rgba.buffer as ArrayBuffer]);
    },
  };
}
