// Planner: storage needed by an acquisition before it is started. Plain arithmetic (common practice,
// no published source): bytes = width × height × bytes per pixel × channels × z-slices × positions ×
// time points (FACTS.md, "Data size"). Field of view: area scales with 1/M² (geometry).

export interface PlanInput {
  width: number;
  height: number;
  /** 1 (8-bit), 2 (12/14/16-bit in a 16-bit container) or 4 (32-bit float). */
  bytesPerPixel: number;
  channels: number;
  zSlices: number;
  positions: number;
  /** Seconds between time points; null when there is no time-lapse interval (one time point, or unknown). */
  intervalS: number | null;
  /** Either the length of the time-lapse (needs intervalS) or the number of time points. */
  time: { mode: "duration"; durationS: number } | { mode: "count"; timePoints: number };
}

export interface StoragePlan {
  bytesPerPlane: number;
  /** All channels and z-slices of one position at one time point. */
  bytesPerStack: number;
  /** All positions at one time point. */
  bytesPerTimePoint: number;
  timePoints: number;
  /** From the first to the last time point, in s; null without an interval. */
  spanS: number | null;
  /** Rate while the time-lapse runs; null without an interval. */
  bytesPerHour: number | null;
  bytesPerDay: number | null;
  totalBytes: number;
  totalPlanes: number;
}

/**
 * Time points in a time-lapse of `durationS` with one every `intervalS`: the first at t = 0 and the
 * last at or before the end, so floor(duration / interval) + 1 (1 h every 10 min → 7). A 1e-9
 * tolerance keeps 3600 / 0.1 from losing its last point to float dust.
 */
export function timePointsFor(durationS: number, intervalS: number): number {
  return Math.floor(durationS / intervalS + 1e-9) + 1;
}

/** planStorage(): the storage estimate tool (PRODUCT.md). Inputs are validated by lib/schemas/planner.ts. */
export function planStorage(input: PlanInput): StoragePlan {
  const bytesPerPlane = input.width * input.height * input.bytesPerPixel;
  const bytesPerStack = bytesPerPlane * input.channels * input.zSlices;
  const bytesPerTimePoint = bytesPerStack * input.positions;
  const interval = input.intervalS;
  let timePoints: number;
  if (input.time.mode === "count") timePoints = input.time.timePoints;
  else if (interval != null) timePoints = timePointsFor(input.time.durationS, interval);
  else throw new RangeError("A time-lapse given by its duration needs an interval.");
  // Multiply before dividing: 1.28e9 / 600 · 3600 would come out as 7679999999.999999.
  const per = (seconds: number) => (interval != null ? (bytesPerTimePoint * seconds) / interval : null);
  return {
    bytesPerPlane,
    bytesPerStack,
    bytesPerTimePoint,
    timePoints,
    spanS: interval != null ? (timePoints - 1) * interval : null,
    bytesPerHour: per(3600),
    bytesPerDay: per(86_400),
    totalBytes: bytesPerTimePoint * timePoints,
    totalPlanes: input.channels * input.zSlices * input.positions * timePoints,
  };
}

const DECIMAL = ["B", "kB", "MB", "GB", "TB", "PB", "EB"];
const BINARY = ["B", "KiB", "MiB", "GiB", "TiB", "PiB", "EiB"];

function scaled(bytes: number, base: number, units: string[]): string {
  if (!Number.isFinite(bytes) || bytes < 0) return "—";
  let value = bytes;
  let unit = 0;
  while (value >= base && unit < units.length - 1) {
    value /= base;
    unit++;
  }
  // Three significant figures, the way sizes are usually quoted; whole bytes below one kB/KiB.
  if (unit === 0) return `${Math.round(value)} B`;
  // 999.96 MB rounds to "1000 MB": step up a unit instead.
  if (Number(value.toFixed(value < 10 ? 2 : value < 100 ? 1 : 0)) >= base && unit < units.length - 1) {
    value /= base;
    unit++;
  }
  return `${value.toFixed(value < 10 ? 2 : value < 100 ? 1 : 0)} ${units[unit]}`;
}

/** Decimal (SI) units, 1 kB = 1000 B: what drive makers and network rates use. */
export function formatDecimal(bytes: number): string {
  return scaled(bytes, 1000, DECIMAL);
}

/** Binary (IEC) units, 1 KiB = 1024 B: what most operating systems show. */
export function formatBinary(bytes: number): string {
  return scaled(bytes, 1024, BINARY);
}

/** Exact byte count with thousands separators; marked ≈ when not a whole number or past 2^53 (where doubles stop being exact). */
export function formatExactBytes(bytes: number): string {
  if (!Number.isFinite(bytes)) return "—";
  if (Number.isSafeInteger(bytes)) return `${bytes.toLocaleString("en")} B`;
  // A rate such as 1 GB every 7 s is not a whole number of bytes per hour: round and say so.
  return bytes < Number.MAX_SAFE_INTEGER ? `≈ ${Math.round(bytes).toLocaleString("en")} B` : `≈ ${bytes.toExponential(3)} B`;
}

/** Classic TIFF stops at 4 GiB (32-bit offsets); beyond it a file must be BigTIFF (TIFF 6.0; BigTIFF design). */
export const CLASSIC_TIFF_LIMIT = 4 * 1024 ** 3;

export interface FieldOfViewChange {
  /** How many times wider (and taller) the field is at `toM` than at `fromM`. */
  linear: number;
  /** How many times larger its area is: (fromM / toM)². */
  area: number;
}

/** Field of view between two magnifications: side ∝ 1/M, area ∝ 1/M² (geometry; 40× → 5× gives 64×). */
export function fieldOfViewChange(fromM: number, toM: number): FieldOfViewChange {
  const linear = fromM / toM;
  return { linear, area: linear * linear };
}

/** Field of view at the sample, in µm, of a camera of widthPx × heightPx pixels of `pitchUm` behind `magnification`. */
export function fieldOfViewUm(widthPx: number, heightPx: number, pitchUm: number, magnification: number): { widthUm: number; heightUm: number; areaMm2: number } {
  const widthUm = (widthPx * pitchUm) / magnification;
  const heightUm = (heightPx * pitchUm) / magnification;
  return { widthUm, heightUm, areaMm2: (widthUm * heightUm) / 1e6 };
}

export interface CodecGroup {
  codec: string;
  datasets: number;
  /** width · height · planes · bytes per sample, summed over the group's datasets. */
  rawBytes: number;
  /** Stored file sizes, summed. */
  storedBytes: number;
}

export interface CodecRatio extends CodecGroup {
  /** rawBytes ÷ storedBytes: above 1 the codec saved space; uncompressed files sit slightly below 1 (headers, metadata). */
  ratio: number | null;
}

/** Compression ratio per codec, most-used codec first, and over all groups. */
export function compressionRatios(groups: CodecGroup[]): { codecs: CodecRatio[]; overall: CodecRatio | null } {
  const ratioOf = (g: CodecGroup): CodecRatio => ({ ...g, ratio: g.storedBytes > 0 && g.rawBytes > 0 ? g.rawBytes / g.storedBytes : null });
  const codecs = groups.filter((g) => g.datasets > 0).map(ratioOf).sort((a, b) => b.datasets - a.datasets || a.codec.localeCompare(b.codec));
  if (!codecs.length) return { codecs, overall: null };
  const sum = codecs.reduce((acc, g) => ({ codec: "all", datasets: acc.datasets + g.datasets, rawBytes: acc.rawBytes + g.rawBytes, storedBytes: acc.storedBytes + g.storedBytes }), { codec: "all", datasets: 0, rawBytes: 0, storedBytes: 0 });
  return { codecs, overall: ratioOf(sum) };
}
