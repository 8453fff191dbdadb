// Figures for talks and papers, as plain numbers and strings: the scale-bar length, the layout of a
// figure (image on top, scale bar, legend and footer text below it, never over the data), the
// legend entries, the line that says the figure is a display mapping, and the sidecar that lets
// anyone reproduce the PNG from the stored file. No DOM: the bench's figure dialog draws what this
// describes, and the tests check it in Node.
//
// Display mappings are not the data; non-linear mappings (gamma) must be disclosed (Rossner &
// Yamada, "What's in a picture?", J Cell Biol 166:11, 2004).
import { FIGURE_SIDECAR_FORMAT, FIGURE_SIDECAR_VERSION, figureSidecar, type FigureSidecar } from "../schemas/figure-sidecar";
import { findTable, parseHex, toHex } from "./colour-tables";
import type { CvdKind } from "./cvd";

/** Output scales offered: every image pixel becomes scale × scale identical pixels. 1 = native. */
export const FIGURE_SCALES = [1, 2, 4] as const;
export type FigureScale = (typeof FIGURE_SCALES)[number];

/**
 * Largest figure the browser is asked to build (pixels). Chromium refuses canvases above about
 * 268 million pixels and encoding tens of millions takes seconds, so we stop well below (our choice).
 */
export const MAX_FIGURE_PIXELS = 50_000_000;
export const MAX_FIGURE_SIDE = 16_384;

/** Figures narrower than this get side margins, so the legend and footer text stay readable. */
export const MIN_FIGURE_WIDTH = 480;

export interface ScaleBar {
  /** Length at the sample, micrometres: 1, 2 or 5 × 10^k. */
  um: number;
  /** Length on the figure, output pixels (um / µm-per-pixel × scale). */
  px: number;
  /** um as a share of the image width. */
  fraction: number;
}

/**
 * A scale bar of 1, 2 or 5 × 10^k µm, about 10–20 % of the image width (common practice). Of the
 * candidates, the one whose share of the width is closest, on a log scale, to √(0.10 · 0.20) ≈ 14 %
 * wins; that centre makes every candidate inside 10–20 % beat every candidate outside it. Neighbouring
 * candidates differ by at most 2.5×, so sometimes none falls inside (then the nearest one is used).
 * The scale changes only how many output pixels the bar spans, never its length in µm.
 */
export function niceScaleBar(umPerPixel: number, imageWidthPx: number, scale = 1): ScaleBar {
  if (!(umPerPixel > 0) || !Number.isFinite(umPerPixel)) throw new RangeError(`µm per pixel must be a positive number, got ${umPerPixel}`);
  if (!(imageWidthPx > 0)) throw new RangeError(`The image width must be positive, got ${imageWidthPx}`);
  if (!(scale > 0)) throw new RangeError(`The scale must be positive, got ${scale}`);
  const widthUm = umPerPixel * imageWidthPx;
  const centre = Math.sqrt(0.1 * 0.2);
  const k = Math.floor(Math.log10(centre * widthUm));
  let best = { um: 0, cost: Infinity };
  for (const exponent of [k - 1, k, k + 1]) {
    for (const m of [1, 2, 5]) {
      // 10^exponent as a decimal string keeps 0.1, 0.01 … exact enough to print (no 0.30000000000000004).
      const um = Number((m * 10 ** exponent).toPrecision(12));
      const cost = Math.abs(Math.log(um / widthUm / centre));
      if (cost < best.cost - 1e-12) best = { um, cost };
    }
  }
  return { um: best.um, px: (best.um / umPerPixel) * scale, fraction: best.um / widthUm };
}

/** "1 µm", "0.5 µm", "200 µm", "2 mm" (lengths of 1000 µm and more in millimetres). */
export function formatLength(um: number): string {
  if (um >= 1000) return `${Number((um / 1000).toPrecision(12))} mm`;
  return `${Number(um.toPrecision(12))} µm`;
}

/** Elapsed time as hh:mm:ss, with tenths when the time is not a whole second (as on the bench). */
export function formatElapsed(seconds: number): string {
  const tenths = Math.round(seconds * 10);
  const h = Math.floor(tenths / 36000);
  const m = Math.floor((tenths % 36000) / 600);
  const s = (tenths % 600) / 10;
  const ss = s % 1 ? s.toFixed(1).padStart(4, "0") : String(s).padStart(2, "0");
  return `${String(h).padStart(2, "0")}:${String(m).padStart(2, "0")}:${ss}`;
}

/** The time-stamp text of time point t (0-based) of sizeT, `interval` seconds apart. */
export function timeStampText(t: number, sizeT: number, interval: number): string {
  return `t = ${formatElapsed(t * interval)} (time point ${t + 1} of ${sizeT})`;
}

/** One channel's display mapping, as the bench holds it. */
export interface FigureChannel {
  c: number;
  name: string;
  /** "#rrggbb": the end of the single-hue ramp (black → colour). */
  colour: string;
  /** A built-in colour table instead of the ramp, or null. */
  tableId: string | null;
  black: number;
  white: number;
  /** 1 = linear. */
  gamma: number;
  visible: boolean;
}

export interface LegendEntry {
  c: number;
  name: string;
  /** "#RRGGBB" of the ramp's end (for a colour table: its last entry). */
  colour: string;
  tableId: string | null;
  black: number;
  white: number;
  gamma: number;
  /** The legend line: name, colour or table, black and white points with unit, gamma when not 1. */
  text: string;
}

/** Numbers as typed on the bench: whole counts without decimals, others with up to 3. */
function formatLevel(v: number): string {
  return Number.isInteger(v) ? String(v) : String(Number(v.toFixed(3)));
}

/**
 * Legend entries for the drawn (visible) channels, in channel order. Black and white points are in
 * raw counts (DN), or in corrected DN when flat/dark correction is on; gamma is named only when
 * it is not 1, and then marked non-linear.
 */
export function legendEntries(channels: readonly FigureChannel[], options: { corrected?: boolean } = {}): LegendEntry[] {
  const unit = options.corrected ? "corrected DN" : "DN";
  return channels
    .filter((ch) => ch.visible)
    .map((ch) => {
      const table = ch.tableId ? findTable(ch.tableId) : undefined;
      const colour = table ? toHex([table.rgb[765], table.rgb[766], table.rgb[767]]) : toHex(parseHex(ch.colour));
      const how = table ? `colour table ${table.name}` : `black to ${colour}`;
      const gamma = ch.gamma !== 1 ? ` · gamma ${ch.gamma} (non-linear)` : "";
      return {
        c: ch.c,
        name: ch.name,
        colour,
        tableId: ch.tableId,
        black: ch.black,
        white: ch.white,
        gamma: ch.gamma,
        text: `${ch.name}: ${how} · black ${formatLevel(ch.black)} ${unit} · white ${formatLevel(ch.white)} ${unit}${gamma}`,
      };
    });
}

export interface DisclosureInput {
  channels: readonly FigureChannel[];
  blend: "add" | "max";
  cvd: CvdKind | null;
  correction: boolean;
  clipMarks: { high: string; low: string } | null;
}

/** Names of the non-linear or simulated mappings in effect, one per item (empty when all are linear). */
export function nonLinearMappings({ channels, cvd, correction }: Pick<DisclosureInput, "channels" | "cvd" | "correction">): string[] {
  const list: string[] = [];
  for (const ch of channels) if (ch.visible && ch.gamma !== 1) list.push(`gamma ${ch.gamma} on ${ch.name}`);
  if (cvd) list.push(`colour-vision preview (${cvd} simulation)`);
  if (correction) list.push("flat/dark correction (display only)");
  return list;
}

/**
 * The line every figure carries: it shows a display mapping, not the data, and names each
 * non-linear mapping (gamma ≠ 1, colour-vision preview, flat/dark correction) and painted marks.
 */
export function disclosureText(input: DisclosureInput): string {
  const nonLinear = nonLinearMappings(input);
  const blend = input.blend === "add" ? "added" : "combined by maximum";
  let text = `Display mapping, not the data: raw counts mapped to colours between each channel's black and white points, channels ${blend}; stored counts unchanged.`;
  text += nonLinear.length ? ` Non-linear: ${nonLinear.join("; ")}.` : " All mappings linear.";
  if (input.clipMarks) text += ` Clipping marks painted: ${input.clipMarks.high.toUpperCase()} at the ceiling, ${input.clipMarks.low.toUpperCase()} at or below black.`;
  return text;
}

/** The footer line that ties the figure to its source: title, plane, checksum prefix. */
export function sourceText(dataset: { title: string; sha256: string; sizeZ: number; sizeT: number }, z: number, t: number): string {
  return `${dataset.title} · z ${z + 1}/${dataset.sizeZ} · t ${t + 1}/${dataset.sizeT} · SHA-256 ${dataset.sha256.slice(0, 16)}… · Fluxframe`;
}

export interface Rect {
  x: number;
  y: number;
  width: number;
  height: number;
}

/** A line of text; (x, y) is its top-left corner (canvas textBaseline "top"). */
export interface TextItem {
  text: string;
  x: number;
  y: number;
}

/** Width of a text at a font size, in pixels. The dialog passes the canvas's measureText. */
export type MeasureText = (text: string, fontPx: number) => number;

/** A rough measure for tests and fallbacks: an average character is about 0.55 em wide in Inter. */
export const approximateMeasure: MeasureText = (text, fontPx) => text.length * fontPx * 0.55;

export interface FigureLayoutInput {
  imageWidth: number;
  imageHeight: number;
  scale: number;
  /** Output pixels of the bar and its label, or null for none. */
  scaleBar: { px: number; label: string } | null;
  timeStamp: string | null;
  /** One legend text per drawn channel (empty for no legend). */
  legend: readonly string[];
  /** Footer lines under the legend (the disclosure first). */
  lines: readonly string[];
  measure?: MeasureText;
  minWidth?: number;
}

export interface FigureLayout {
  width: number;
  height: number;
  fontPx: number;
  lineHeight: number;
  padding: number;
  image: Rect;
  scaleBar: { bar: Rect; label: TextItem } | null;
  timeStamp: TextItem | null;
  legend: { swatch: Rect; text: TextItem[] }[];
  text: TextItem[];
}

/** Greedy word wrap to `width`; a single word wider than the line is cut into pieces that fit. */
export function wrapText(text: string, width: number, fontPx: number, measure: MeasureText = approximateMeasure): string[] {
  const lines: string[] = [];
  let line = "";
  for (const word of text.split(/\s+/).filter(Boolean)) {
    const next = line ? `${line} ${word}` : word;
    if (measure(next, fontPx) <= width) {
      line = next;
      continue;
    }
    if (line) lines.push(line);
    line = word;
    while (measure(line, fontPx) > width && line.length > 1) {
      let cut = line.length - 1;
      while (cut > 1 && measure(line.slice(0, cut), fontPx) > width) cut--;
      lines.push(line.slice(0, cut));
      line = line.slice(cut);
    }
  }
  if (line) lines.push(line);
  return lines;
}

/**
 * Lays a figure out in output pixels: the image at the top (its pixels, scale × scale each, with
 * nothing drawn over them), then a row with the time stamp (left) and the scale bar (right, under
 * the image's right edge), then one legend row per channel (colour swatch + text), then the footer
 * lines, wrapped. Text size follows the figure width (1/40 of it, 12–64 px, our choice) so the text
 * keeps its size relative to the image when a figure is scaled to a column width.
 */
export function figureLayout(input: FigureLayoutInput): FigureLayout {
  const measure = input.measure ?? approximateMeasure;
  const scale = input.scale;
  if (!Number.isInteger(scale) || scale < 1) throw new RangeError(`The scale must be a whole number ≥ 1, got ${scale}`);
  const imageW = input.imageWidth * scale;
  const imageH = input.imageHeight * scale;
  const width = Math.max(imageW, input.minWidth ?? MIN_FIGURE_WIDTH);
  const fontPx = Math.min(64, Math.max(12, Math.round(width / 40)));
  const lineHeight = Math.round(fontPx * 1.4);
  const padding = Math.round(fontPx * 0.75);
  const image = { x: Math.floor((width - imageW) / 2), y: 0, width: imageW, height: imageH };
  const left = Math.max(image.x, padding);
  const right = Math.min(image.x + imageW, width - padding);
  const textWidth = width - 2 * padding;
  let y = imageH + padding;

  let scaleBar: FigureLayout["scaleBar"] = null;
  let timeStamp: TextItem | null = null;
  if (input.scaleBar || input.timeStamp) {
    let rowHeight = lineHeight;
    if (input.scaleBar) {
      const barH = Math.max(2, Math.round(fontPx / 4));
      const barW = Math.max(1, Math.round(input.scaleBar.px));
      const bar = { x: Math.max(0, right - barW), y, width: barW, height: barH };
      const labelW = measure(input.scaleBar.label, fontPx);
      // Centred under the bar, but kept inside the figure.
      const labelX = Math.round(Math.min(width - padding - labelW, Math.max(padding, bar.x + barW / 2 - labelW / 2)));
      scaleBar = { bar, label: { text: input.scaleBar.label, x: labelX, y: y + barH + Math.round(fontPx / 4) } };
      rowHeight = barH + Math.round(fontPx / 4) + lineHeight;
    }
    if (input.timeStamp) {
      timeStamp = { text: input.timeStamp, x: left, y };
      // Under a narrow image the time stamp would run into the bar or its label: it gets its own row.
      const end = left + measure(input.timeStamp, fontPx) + fontPx;
      if (scaleBar && end > Math.min(scaleBar.bar.x, scaleBar.label.x)) {
        timeStamp.y = y + rowHeight;
        rowHeight += lineHeight;
      }
    }
    y += rowHeight + Math.round(padding / 2);
  }

  const legend: FigureLayout["legend"] = [];
  const swatchW = fontPx * 3;
  const swatchH = Math.round(fontPx * 0.8);
  for (const entry of input.legend) {
    const textX = padding + swatchW + Math.round(fontPx / 2);
    const rows = wrapText(entry, width - padding - textX, fontPx, measure);
    legend.push({
      swatch: { x: padding, y: y + Math.round((lineHeight - swatchH) / 2), width: swatchW, height: swatchH },
      text: rows.map((text, i) => ({ text, x: textX, y: y + i * lineHeight + Math.round((lineHeight - fontPx) / 2) })),
    });
    y += Math.max(1, rows.length) * lineHeight;
  }
  if (input.legend.length) y += Math.round(padding / 2);

  const text: TextItem[] = [];
  for (const line of input.lines) {
    for (const row of wrapText(line, textWidth, fontPx, measure)) {
      text.push({ text: row, x: padding, y: y + Math.round((lineHeight - fontPx) / 2) });
      y += lineHeight;
    }
  }
  return { width, height: y + padding, fontPx, lineHeight, padding, image, scaleBar, timeStamp, legend, text };
}

/** Whether a figure of this plane at this scale is small enough to build in the browser. */
export function figureFits(imageWidth: number, imageHeight: number, scale: number, footerHeight = 0): boolean {
  const w = Math.max(imageWidth * scale, MIN_FIGURE_WIDTH);
  const h = imageHeight * scale + footerHeight;
  return w <= MAX_FIGURE_SIDE && h <= MAX_FIGURE_SIDE && w * h <= MAX_FIGURE_PIXELS;
}

/**
 * Nearest-neighbour enlargement of RGBA by a whole factor: each pixel becomes k × k copies of itself,
 * so no colour appears that was not in the render. Done here rather than by canvas drawImage, whose
 * scaling filter is not specified to be exact.
 */
export function upscaleNearest(rgba: Uint8ClampedArray, width: number, height: number, k: number): Uint8ClampedArray<ArrayBuffer> {
  if (!Number.isInteger(k) || k < 1) throw new RangeError(`The factor must be a whole number ≥ 1, got ${k}`);
  if (rgba.length !== width * height * 4) throw new RangeError(`Expected ${width * height * 4} bytes for ${width} × ${height} RGBA, got ${rgba.length}`);
  // A copy when the bytes do not start on a 4-byte boundary, so they can be read as whole pixels.
  const aligned = k === 1 || rgba.byteOffset % 4 !== 0 ? rgba.slice() : rgba;
  if (k === 1) return aligned as Uint8ClampedArray<ArrayBuffer>;
  const src = new Uint32Array(aligned.buffer, aligned.byteOffset, width * height);
  const outW = width * k;
  const out = new Uint32Array(outW * height * k);
  for (let y = 0; y < height; y++) {
    const row = out.subarray(y * k * outW, (y * k + 1) * outW);
    for (let x = 0; x < width; x++) row.fill(src[y * width + x], x * k, (x + 1) * k);
    for (let r = 1; r < k; r++) out.copyWithin((y * k + r) * outW, y * k * outW, (y * k + 1) * outW);
  }
  return new Uint8ClampedArray(out.buffer);
}

export interface SidecarInput {
  dataset: {
    id: number;
    title: string;
    sha256: string;
    width: number;
    height: number;
    sizeC: number;
    sizeZ: number;
    sizeT: number;
    ceiling: number | null;
    physicalSizeX: number | null;
    timeIncrement: number | null;
  };
  z: number;
  t: number;
  channels: readonly FigureChannel[];
  blend: "add" | "max";
  clipMarks: FigureSidecar["clipMarks"];
  cvd: CvdKind | null;
  correction: { flatDatasetId: number; darkDatasetId: number } | null;
  scale: number;
  scaleBar: { um: number; px: number } | null;
  timeStamp: string | null;
  legend: boolean;
  background: "white" | "black";
  layout: Pick<FigureLayout, "width" | "height" | "image">;
  exportedAt: Date;
  appVersion: string;
}

/**
 * The sidecar object, validated against the versioned schema before it is returned, so a figure is
 * never written with a sidecar that its own reader would refuse.
 */
export function buildFigureSidecar(input: SidecarInput): FigureSidecar {
  const { dataset } = input;
  const channels = input.channels.map((ch) => ({
    c: ch.c,
    name: ch.name,
    colour: ch.colour.toLowerCase(),
    tableId: ch.tableId,
    black: ch.black,
    white: ch.white,
    gamma: ch.gamma,
    visible: ch.visible,
  }));
  const disclosure = disclosureText({ channels, blend: input.blend, cvd: input.cvd, correction: input.correction !== null, clipMarks: input.clipMarks });
  return figureSidecar.parse({
    format: FIGURE_SIDECAR_FORMAT,
    version: FIGURE_SIDECAR_VERSION,
    app: { name: "Fluxframe", version: input.appVersion },
    exportedAt: input.exportedAt.toISOString(),
    dataset: {
      id: dataset.id,
      title: dataset.title,
      sha256: dataset.sha256.toLowerCase(),
      width: dataset.width,
      height: dataset.height,
      sizeC: dataset.sizeC,
      sizeZ: dataset.sizeZ,
      sizeT: dataset.sizeT,
      ceiling: dataset.ceiling,
    },
    plane: { z: input.z, t: input.t, c: channels.filter((ch) => ch.visible).map((ch) => ch.c) },
    channels,
    blend: input.blend,
    clipMarks: input.clipMarks,
    cvdPreview: input.cvd,
    correction: input.correction,
    pixelSizeUm: dataset.physicalSizeX,
    timeIncrementS: dataset.timeIncrement,
    output: {
      scale: input.scale,
      width: input.layout.width,
      height: input.layout.height,
      image: input.layout.image,
      background: input.background,
      legend: input.legend,
      timeStamp: input.timeStamp,
      scaleBar: input.scaleBar ? { um: input.scaleBar.um, px: input.scaleBar.px } : null,
    },
    nonLinear: nonLinearMappings({ channels, cvd: input.cvd, correction: input.correction !== null }),
    disclosure,
  });
}
