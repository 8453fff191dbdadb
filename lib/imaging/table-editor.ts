// The colour-table editor's arithmetic (pure; no DOM): build a 256-entry table from colour stops
// interpolated in a perceptual space, measure its lightness profile, show it under simulated
// colour-vision deficiencies, give a "colour-vision safe" verdict, and read/write CSV and JSON.
//
// Colour conversions and interpolation are culori's (4.x), not hand-written:
// - OKLab: Björn Ottosson, "A perceptual color space for image processing" (2020), culori "oklab".
// - CIELAB: CIE 15 (Colorimetry), relative to D65 (culori "lab65"), the same Lab as our CIEDE2000
//   (colour-difference.ts): the sRGB white, no chromatic adaptation.
// Interpolation is linear in the chosen space's rectangular coordinates (L, a, b) between
// neighbouring stops; entries are sampled at t = i / 255, so entry 0 is the first stop's colour and
// entry 255 the last's.
import { clampChroma, converter, interpolate, type Color } from "culori";
import {
  COLOUR_TABLE_ENTRIES,
  COLOUR_TABLE_FILE_FORMAT,
  COLOUR_TABLE_FILE_VERSION,
  colourTableFileV1,
  type ColourStop,
  type InterpolationSpace,
} from "../schemas/colour-table";
import { deltaE2000Lab, srgbToLab, type Lab, type Vision } from "./colour-difference";
import { toHex, type Rgb } from "./colour-tables";
import { CVD_KINDS, simulateCvdRgb, type CvdKind } from "./cvd";

export type { ColourStop, InterpolationSpace };

const N = COLOUR_TABLE_ENTRIES;

/** culori's mode for each space, and the polar form of it in which chroma is reduced to reach the gamut. */
const MODES: Record<InterpolationSpace, { mode: "oklab" | "lab65"; polar: "oklch" | "lch65" }> = {
  oklab: { mode: "oklab", polar: "oklch" },
  cielab: { mode: "lab65", polar: "lch65" },
};

const toRgb = converter("rgb");

/**
 * How far outside [0, 1] an sRGB component may be and still count as in gamut: converting an
 * in-gamut stop colour to OKLab and back can give 1.0000000002. 1e-4 is far below half an 8-bit
 * step (0.002), so such a colour rounds to the same entry either way.
 */
const GAMUT_EPSILON = 1e-4;

export interface BuiltTable {
  /** 256 entries × [r, g, b], as ColourTable.rgb. */
  rgb: Uint8Array;
  /**
   * Entries whose interpolated colour lay outside the sRGB gamut (possible between two in-gamut
   * stops: neither space is convex in sRGB). Each was brought inside by lowering its chroma at
   * constant lightness and hue (culori clampChroma in OKLCh or LCh), so the lightness profile is kept.
   */
  gamutMapped: number[];
}

const byPosition = (stops: readonly ColourStop[]) =>
  // A stable sort: two stops at one position keep their order and make a sharp step there.
  stops.map((s, k) => ({ ...s, k })).sort((a, b) => a.position - b.position || a.k - b.k);

const outside = (c: { r: number; g: number; b: number }) =>
  [c.r, c.g, c.b].some((v) => v < -GAMUT_EPSILON || v > 1 + GAMUT_EPSILON);

const to8 = (v: number) => Math.round(255 * Math.min(1, Math.max(0, v)));

/** The interpolated colour (in the space's culori mode) at t ∈ [0, 1]; culori's interpolate with stop positions. */
export function stopInterpolator(stops: readonly ColourStop[], space: InterpolationSpace): (t: number) => Color {
  if (stops.length < 2) throw new RangeError("A colour table needs at least two stops");
  const sorted = byPosition(stops);
  return interpolate(
    sorted.map((s) => [s.colour, s.position] as [string, number]),
    MODES[space].mode,
  ) as (t: number) => Color;
}

/** One colour (any culori mode) → 8-bit sRGB, lowering chroma in `polar` when it lies outside sRGB. */
function toSrgb8(colour: Color, polar: "oklch" | "lch65"): { rgb: Rgb; mapped: boolean } {
  let rgb = toRgb(colour);
  let mapped = false;
  if (outside(rgb)) {
    rgb = toRgb(clampChroma(colour, polar));
    mapped = true;
  }
  return { rgb: [to8(rgb.r), to8(rgb.g), to8(rgb.b)], mapped };
}

/**
 * A 256-entry table from colour stops (positions 0 … 1, "#rrggbb"), interpolated in OKLab or
 * CIELAB; entry i is the colour at t = i / 255, converted to 8-bit sRGB (round to nearest).
 */
export function buildTableFromStops(stops: readonly ColourStop[], space: InterpolationSpace): BuiltTable {
  const at = stopInterpolator(stops, space);
  const rgb = new Uint8Array(N * 3);
  const gamutMapped: number[] = [];
  for (let i = 0; i < N; i++) {
    const { rgb: c, mapped } = toSrgb8(at(i / (N - 1)), MODES[space].polar);
    rgb.set(c, 3 * i);
    if (mapped) gamutMapped.push(i);
  }
  return { rgb, gamutMapped };
}

/** Entry i of a 768-byte table. */
export const entryOf = (rgb: Uint8Array, i: number): Rgb => [rgb[3 * i], rgb[3 * i + 1], rgb[3 * i + 2]];

function assertTable(rgb: Uint8Array): void {
  if (rgb.length !== N * 3) throw new RangeError(`A colour table has ${N * 3} bytes (256 × r, g, b), got ${rgb.length}`);
}

/**
 * Stops that approximate an existing table (a built-in or imported one), to start editing from:
 * `count` entries evenly spaced, first and last included. Only an approximation: the editor
 * rebuilds the table from these stops.
 */
export function sampleStops(rgb: Uint8Array, count = 9): ColourStop[] {
  assertTable(rgb);
  return Array.from({ length: count }, (_, k) => {
    const i = Math.round((k * (N - 1)) / (count - 1));
    return { position: i / (N - 1), colour: toHex(entryOf(rgb, i)).toLowerCase() };
  });
}

// ---- Lightness ------------------------------------------------------------------------------------

/** CIELAB L* (D65, 0 … 100) of every entry: the lightness profile. */
export function lightnessProfile(rgb: Uint8Array): Float64Array {
  assertTable(rgb);
  const out = new Float64Array(N);
  for (let i = 0; i < N; i++) out[i] = srgbToLab(entryOf(rgb, i)).l;
  return out;
}

/**
 * How far L* may fall back below the highest value reached so far (for a rising table) and still
 * count as monotonic: 8-bit rounding of each component moves L* by up to about 0.2 (one code of
 * green near black), so a smooth ramp can wobble by that much without any visible reversal. Our
 * choice: 0.5 L*, half of about one just-noticeable lightness difference (≈ 1 L* for patches side
 * by side; common practice). It is measured against the running maximum, not entry to entry, so a
 * slow decline over many entries is caught too.
 */
export const LIGHTNESS_TOLERANCE = 0.5;

export interface LightnessCheck {
  /**
   * "rising": L* ends higher than it starts and never falls more than the tolerance below the
   * highest value before it; "falling" the mirror image; "neither" otherwise (a reversal somewhere,
   * e.g. a rainbow, or a flat table).
   */
  direction: "rising" | "falling" | "neither";
  /** L* of the first and last entry. */
  first: number;
  last: number;
  /**
   * The largest reversal against the overall direction: L* goes back by `amount` from entry `from`
   * (the extreme reached so far) to entry `to`. Null when there is none at all.
   */
  worstReversal: { from: number; to: number; amount: number } | null;
}

export function checkLightness(profile: ArrayLike<number>, tolerance = LIGHTNESS_TOLERANCE): LightnessCheck {
  if (profile.length < 2) throw new RangeError("A lightness profile needs at least two entries");
  const first = profile[0];
  const last = profile[profile.length - 1];
  // A flat table is checked as if rising: any change at all is then a reversal of one kind or other.
  const sign = last < first ? -1 : 1;
  let extreme = 0;
  let worst: { from: number; to: number; amount: number } | null = null;
  for (let i = 1; i < profile.length; i++) {
    const back = sign * (profile[extreme] - profile[i]);
    if (back > 0 && (!worst || back > worst.amount)) worst = { from: extreme, to: i, amount: back };
    if (sign * (profile[i] - profile[extreme]) > 0) extreme = i;
  }
  const monotonic = last !== first && (!worst || worst.amount <= tolerance);
  return { direction: monotonic ? (sign > 0 ? "rising" : "falling") : "neither", first, last, worstReversal: worst };
}

// ---- Colour vision ---------------------------------------------------------------------------------

/** The table as seen with a colour-vision deficiency: every entry through Machado et al. (2009), exact path. */
export function simulateTable(rgb: Uint8Array, kind: CvdKind): Uint8Array {
  assertTable(rgb);
  const out = new Uint8Array(N * 3);
  for (let i = 0; i < N; i++) out.set(simulateCvdRgb(entryOf(rgb, i), kind), 3 * i);
  return out;
}

/**
 * The "colour-vision safe" rule (README.md, "Colour tables"). Neighbouring 8-bit entries always
 * differ by less than one just-noticeable difference, so steps are compared at a stride: entry k
 * against entry k + SAFE_STRIDE, for every k. A stride of 32 is an eighth of the table, i.e. the
 * question is "can a reader tell at least 8 levels apart anywhere along the ramp?"
 */
export const SAFE_STRIDE = 32;
/**
 * Every such pair must be at least this far apart (CIEDE2000 with lightness, Lab D65) under normal
 * vision and under protanopia, deuteranopia and tritanopia (Machado et al. 2009, full severity).
 * Our choice; no published threshold exists for this use. 4 ΔE00 lies in the band usually described
 * as "perceptible at a glance" (about 2 to 10; ≈ 1 is a just-noticeable difference for patches side
 * by side; common practice). Measured (tests/imaging/table-editor.test.ts): grey 6.7, viridis 4.5
 * (protanopia, yellow end), cividis 5.4, magma 6.0 pass; an OKLab red-to-green ramp gets 2.0 under
 * deuteranopia and a blue–cyan–green–yellow–red rainbow 0.9 under protanopia, and both fail.
 */
export const SAFE_THRESHOLD = 4;

export interface StepDistance {
  /** The smallest ΔE00 between entries k and k + stride. */
  distance: number;
  /** That k. */
  index: number;
}

export interface CvdVerdict {
  safe: boolean;
  stride: number;
  threshold: number;
  /** The smallest step under each vision. */
  byVision: Record<Vision, StepDistance>;
  /** The smallest step of all, and the vision under which it occurs. */
  worst: StepDistance & { vision: Vision };
}

export const VISIONS: readonly Vision[] = ["normal", ...CVD_KINDS];

function smallestStep(labs: Lab[], stride: number): StepDistance {
  let best: StepDistance = { distance: Infinity, index: 0 };
  for (let k = 0; k + stride < labs.length; k++) {
    const d = deltaE2000Lab(labs[k], labs[k + stride]);
    if (d < best.distance) best = { distance: d, index: k };
  }
  return best;
}

/** The "colour-vision safe" verdict of a table (see SAFE_STRIDE and SAFE_THRESHOLD). */
export function cvdSafety(rgb: Uint8Array, options: { stride?: number; threshold?: number } = {}): CvdVerdict {
  assertTable(rgb);
  const stride = options.stride ?? SAFE_STRIDE;
  const threshold = options.threshold ?? SAFE_THRESHOLD;
  if (!(Number.isInteger(stride) && stride >= 1 && stride < N)) throw new RangeError(`The stride must be a whole number from 1 to ${N - 1}`);
  const byVision = {} as Record<Vision, StepDistance>;
  let worst: StepDistance & { vision: Vision } = { distance: Infinity, index: 0, vision: "normal" };
  for (const vision of VISIONS) {
    const seen = vision === "normal" ? rgb : simulateTable(rgb, vision);
    const labs = Array.from({ length: N }, (_, i) => srgbToLab(entryOf(seen, i)));
    const step = smallestStep(labs, stride);
    byVision[vision] = step;
    if (step.distance < worst.distance) worst = { ...step, vision };
  }
  return { safe: worst.distance >= threshold, stride, threshold, byVision, worst };
}

// ---- Files ---------------------------------------------------------------------------------------

/** One problem in an imported file, with its 1-based line number (0 when the file as a whole is wrong). */
export interface LineError {
  line: number;
  message: string;
}

export type ParseOutcome<T> = { ok: true; value: T } | { ok: false; errors: LineError[] };

/** At most this many problems are reported; the count of the rest is given in the last message. */
export const MAX_REPORTED_ERRORS = 20;

function capErrors(errors: LineError[]): LineError[] {
  if (errors.length <= MAX_REPORTED_ERRORS) return errors;
  const rest = errors.length - (MAX_REPORTED_ERRORS - 1);
  return [...errors.slice(0, MAX_REPORTED_ERRORS - 1), { line: errors[MAX_REPORTED_ERRORS - 1].line, message: `… and ${rest} more problems from here on.` }];
}

/** The header line written by tableToCsv and accepted (optionally) by parseTableCsv. */
export const CSV_HEADER = "index,r,g,b";

/**
 * CSV export: the header line `index,r,g,b`, then 256 rows `i,r,g,b` (decimal, no spaces), each
 * line ending in "\n" (also the last). The same bytes as numpy's
 * `np.savetxt(f, a, fmt="%d", delimiter=",", header="index,r,g,b", comments="")`.
 */
export function tableToCsv(rgb: Uint8Array): string {
  assertTable(rgb);
  let out = CSV_HEADER + "\n";
  for (let i = 0; i < N; i++) out += `${i},${rgb[3 * i]},${rgb[3 * i + 1]},${rgb[3 * i + 2]}\n`;
  return out;
}

const WHOLE = /^\d{1,3}$/;
const FIELDS = ["index", "r", "g", "b"] as const;

/**
 * CSV import, strict (a fixed format, so no general CSV package): an optional header line exactly
 * `index,r,g,b` (letter case and spaces around the commas ignored), then 256 rows `i,r,g,b` with i
 * running 0 … 255 in order and r, g, b whole numbers 0 … 255. Spaces around a value, "\r\n" line
 * ends, a UTF-8 byte-order mark and one final line end are accepted; blank lines, quotes, signs,
 * decimals and extra columns are not. Every problem is reported with its line number, and nothing
 * is returned unless the whole file is right.
 */
export function parseTableCsv(text: string): ParseOutcome<Uint8Array> {
  const lines = text.replace(/^\uFEFF/, "").split(/\r?\n/);
  if (lines.length > 1 && lines[lines.length - 1] === "") lines.pop();
  const errors: LineError[] = [];
  let first = 0;
  const header = lines[0]?.split(",").map((s) => s.trim().toLowerCase());
  if (header && header.join(",") === CSV_HEADER) first = 1;
  else if (header && header.some((s) => /[a-z]/.test(s)) && !header.some((s) => WHOLE.test(s))) {
    errors.push({ line: 1, message: `The header must be "${CSV_HEADER}" (or leave it out), not "${lines[0]}".` });
    first = 1;
  }
  const rgb = new Uint8Array(N * 3);
  let row = 0;
  for (let k = first; k < lines.length; k++) {
    const line = k + 1;
    const raw = lines[k];
    if (row >= N) {
      errors.push({ line, message: `There are more than ${N} rows; a colour table has exactly ${N} (index 0 to ${N - 1}).` });
      break;
    }
    const expectedIndex = row;
    row++;
    if (raw.trim() === "") {
      errors.push({ line, message: `Empty line; expected "${expectedIndex},r,g,b".` });
      continue;
    }
    const fields = raw.split(",").map((s) => s.trim());
    if (fields.length !== 4) {
      errors.push({ line, message: `Expected 4 values (index,r,g,b), found ${fields.length}.` });
      continue;
    }
    const problems: string[] = [];
    const values = fields.map((f, j) => {
      if (!WHOLE.test(f) || Number(f) > 255) {
        problems.push(`${FIELDS[j]} "${f}" is not a whole number from 0 to 255`);
        return -1;
      }
      return Number(f);
    });
    if (values[0] >= 0 && values[0] !== expectedIndex) problems.push(`index is ${values[0]}, expected ${expectedIndex} (rows run 0 to ${N - 1} in order)`);
    if (problems.length) {
      errors.push({ line, message: problems.join("; ") + "." });
      continue;
    }
    rgb.set(values.slice(1), 3 * expectedIndex);
  }
  if (row < N && errors.length === 0) {
    errors.push({ line: lines.length + 1, message: `The file ends after ${row} rows; a colour table has exactly ${N} (index 0 to ${N - 1}).` });
  } else if (row < N) {
    errors.push({ line: lines.length + 1, message: `Only ${row} rows were found; a colour table has exactly ${N}.` });
  }
  return errors.length ? { ok: false, errors: capErrors(errors) } : { ok: true, value: rgb };
}

export interface ColourTableFile {
  name: string;
  space: InterpolationSpace | null;
  stops: ColourStop[] | null;
  rgb: Uint8Array;
}

/** 768 bytes ↔ 1,536 hexadecimal digits (the API's form of the entries). */
export function rgbToHexString(rgb: Uint8Array): string {
  assertTable(rgb);
  return Array.from(rgb, (v) => v.toString(16).padStart(2, "0")).join("");
}

export function hexStringToRgb(hex: string): Uint8Array {
  if (!/^[0-9a-f]*$/i.test(hex) || hex.length !== N * 6) throw new RangeError(`Expected ${N * 6} hexadecimal digits`);
  return Uint8Array.from({ length: N * 3 }, (_, k) => parseInt(hex.slice(2 * k, 2 * k + 2), 16));
}

/**
 * JSON export, file format version 1 (lib/schemas/colour-table.ts): two-space indentation, one entry
 * per line, so a line number in an import error points at one entry.
 */
export function tableToJson(table: ColourTableFile): string {
  const doc = {
    format: COLOUR_TABLE_FILE_FORMAT,
    version: COLOUR_TABLE_FILE_VERSION,
    name: table.name,
    space: table.space,
    stops: table.stops,
    entries: Array.from({ length: N }, (_, i) => toHex(entryOf(table.rgb, i)).toLowerCase()),
  };
  return JSON.stringify(doc, null, 2) + "\n";
}

const lineAt = (text: string, offset: number) => {
  let line = 1;
  for (let i = 0; i < offset && i < text.length; i++) if (text.charCodeAt(i) === 10) line++;
  return line;
};

/**
 * Where each value of a JSON text starts (1-based line), keyed by its path ("entries.17",
 * "stops.0.colour"). A small scanner over text that JSON.parse has already accepted, so it only
 * has to skip strings, numbers and literals; it lets schema errors name a line, not just a path.
 */
export function jsonValueLines(text: string): Map<string, number> {
  const lines = new Map<string, number>();
  let i = 0;
  let line = 1;
  const skipSpace = () => {
    while (i < text.length && /[\s]/.test(text[i])) {
      if (text[i] === "\n") line++;
      i++;
    }
  };
  const readString = (): string => {
    const start = i;
    i++;
    while (i < text.length && text[i] !== '"') i += text[i] === "\\" ? 2 : 1;
    i++;
    return JSON.parse(text.slice(start, i)) as string;
  };
  const value = (path: string) => {
    skipSpace();
    lines.set(path, line);
    const c = text[i];
    const child = (key: string | number) => (path ? `${path}.${key}` : String(key));
    if (c === "{") {
      i++;
      skipSpace();
      if (text[i] === "}") return void i++;
      for (;;) {
        skipSpace();
        const key = readString();
        skipSpace();
        i++; // ':'
        value(child(key));
        skipSpace();
        if (text[i++] === "}") return;
      }
    }
    if (c === "[") {
      i++;
      skipSpace();
      if (text[i] === "]") return void i++;
      for (let k = 0; ; k++) {
        value(child(k));
        skipSpace();
        if (text[i++] === "]") return;
      }
    }
    if (c === '"') return void readString();
    while (i < text.length && !/[\s,\]}]/.test(text[i])) i++;
  };
  value("");
  return lines;
}

/** The line of the nearest enclosing value that has one (a missing key points at its object). */
function lineOfPath(lines: Map<string, number>, path: readonly PropertyKey[]): number {
  for (let n = path.length; n >= 0; n--) {
    const hit = lines.get(path.slice(0, n).map(String).join("."));
    if (hit !== undefined) return hit;
  }
  return 1;
}

/** Largest difference, in 8-bit codes, that stops may show against the file's entries (rounding in another culori version). */
export const STOPS_MATCH_TOLERANCE = 1;

/**
 * JSON import (file format version 1): syntax errors with their line, schema errors with the line
 * of the offending value, and, when the file has stops, a check that they rebuild its entries
 * (within STOPS_MATCH_TOLERANCE codes); the entries, not the stops, are the table that is kept.
 */
export function parseTableJson(text: string): ParseOutcome<ColourTableFile> {
  const clean = text.replace(/^\uFEFF/, "");
  let doc: unknown;
  try {
    doc = JSON.parse(clean);
  } catch (error) {
    const message = error instanceof Error ? error.message : String(error);
    const at = /position (\d+)/.exec(message);
    const lineCol = /line (\d+)/.exec(message);
    const line = lineCol ? Number(lineCol[1]) : at ? lineAt(clean, Number(at[1])) : 0;
    return { ok: false, errors: [{ line, message: `Not valid JSON: ${message.replace(/^JSON\.parse: /, "")}` }] };
  }
  const parsed = colourTableFileV1.safeParse(doc);
  if (!parsed.success) {
    const lines = jsonValueLines(clean);
    const errors = parsed.error.issues.map((issue) => {
      const where = issue.path.length ? `${issue.path.map(String).join(".")}: ` : "";
      return { line: lineOfPath(lines, issue.path), message: `${where}${issue.message}` };
    });
    errors.sort((a, b) => a.line - b.line);
    return { ok: false, errors: capErrors(errors) };
  }
  const file = parsed.data;
  const rgb = new Uint8Array(N * 3);
  file.entries.forEach((hex, i) => rgb.set([parseInt(hex.slice(1, 3), 16), parseInt(hex.slice(3, 5), 16), parseInt(hex.slice(5, 7), 16)], 3 * i));
  if (file.stops && file.space) {
    const rebuilt = buildTableFromStops(file.stops, file.space).rgb;
    let worst = -1;
    for (let k = 0; k < rgb.length; k++) if (Math.abs(rgb[k] - rebuilt[k]) > STOPS_MATCH_TOLERANCE) {
      worst = Math.floor(k / 3);
      break;
    }
    if (worst >= 0) {
      const lines = jsonValueLines(clean);
      return {
        ok: false,
        errors: [
          {
            line: lineOfPath(lines, ["entries", worst]),
            message: `entries.${worst}: the stops give ${toHex(entryOf(rebuilt, worst)).toLowerCase()} here, the file says ${file.entries[worst]}. Remove "stops" and "space" (set them to null) to keep the entries as they are.`,
          },
        ],
      };
    }
  }
  return { ok: true, value: { name: file.name, space: file.space, stops: file.stops, rgb } };
}
