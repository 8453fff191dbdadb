// Colour tables: 256 RGB entries that turn an 8-bit display level (from the mapping) into a colour.
// Only the display changes; raw counts are never touched.
//
// Sources:
// - viridis, magma, inferno, plasma: the published 256-entry lists (Smith & van der Walt, matplotlib
//   2015, CC0) as shipped by d3-scale-chromatic, whose ramps are those lists (see
//   shared/reference/colormaps_viridis_cividis.json: 256/256 viridis rows identical).
// - cividis: Nuñez, Anderton & Renslow (2018), PLoS ONE 13(7): e0199239. d3-scale-chromatic's
//   interpolateCividis is a 5th-degree polynomial fit, not the published table (up to about 2.6 ΔE00
//   away), and two different "published" tables exist (matplotlib's and the authors' repository). We
//   ship d3's approximation, sampled like the others, and test it against the published samples with
//   a tolerance (ΔE00 ≤ 3). Our choice: at < 3 ΔE00 the difference is below what a colour table's
//   reader can use, and pinning one of two disagreeing tables would not be "more published".
// - Channel colour sets: Okabe & Ito, "Color Universal Design" (2002, revised 2008); two channels get
//   magenta/green (Wong, "Points of view: Color blindness", Nature Methods 8:441, 2011).
import { interpolateCividis, interpolateInferno, interpolateMagma, interpolatePlasma, interpolateViridis } from "d3-scale-chromatic";

/** An sRGB colour as 8-bit [r, g, b]. */
export type Rgb = readonly [r: number, g: number, b: number];

export type ColourTableKind = "single-hue" | "perceptual" | "grey";

export interface ColourTable {
  /** Stable id for presets and URLs, e.g. "grey", "ramp-ff00ff", "viridis". */
  id: string;
  /** Plain descriptive name shown in the UI. */
  name: string;
  kind: ColourTableKind;
  /** 256 entries × [r, g, b], so entry i is rgb[3i], rgb[3i + 1], rgb[3i + 2]. */
  rgb: Uint8Array;
}

export const TABLE_SIZE = 256;

/** "#RRGGBB" (or "RRGGBB") → [r, g, b]; throws on anything else so a typo cannot become black. */
export function parseHex(hex: string): Rgb {
  const m = /^#?([0-9a-f]{6})$/i.exec(hex.trim());
  if (!m) throw new RangeError(`Expected a colour like #RRGGBB, got "${hex}"`);
  const v = parseInt(m[1], 16);
  return [(v >> 16) & 255, (v >> 8) & 255, v & 255];
}

export function toHex([r, g, b]: Rgb): string {
  return "#" + [r, g, b].map((c) => c.toString(16).padStart(2, "0")).join("").toUpperCase();
}

/** Entry i of a table as [r, g, b]. */
export function tableEntry(table: ColourTable, i: number): Rgb {
  return [table.rgb[3 * i], table.rgb[3 * i + 1], table.rgb[3 * i + 2]];
}

/** Parses the two forms d3 interpolators return: "#rrggbb" and "rgb(r, g, b)". */
function parseD3Colour(s: string): Rgb {
  if (s.startsWith("#")) return parseHex(s);
  const m = /^rgb\((\d+),\s*(\d+),\s*(\d+)\)$/.exec(s);
  if (!m) throw new RangeError(`Unexpected colour string from d3: "${s}"`);
  return [Number(m[1]), Number(m[2]), Number(m[3])];
}

function makeTable(id: string, name: string, kind: ColourTableKind, entry: (i: number) => Rgb): ColourTable {
  const rgb = new Uint8Array(TABLE_SIZE * 3);
  for (let i = 0; i < TABLE_SIZE; i++) rgb.set(entry(i), 3 * i);
  return { id, name, kind, rgb };
}

/** Grey: entry i is (i, i, i), so the display level is shown unchanged. */
export function greyTable(): ColourTable {
  return makeTable("grey", "Grey", "grey", (i) => [i, i, i]);
}

/**
 * A single-hue ramp from black to `colour`, linear in the sRGB code values:
 * entry i = round(colour × i / 255) per component (round half up; exact in integers). This is the
 * ramp the ingest thumbnail already uses (mapping.ts), so additive composites of ramps add display
 * values.
 */
export function singleHueTable(colour: Rgb | string, name?: string): ColourTable {
  const c = typeof colour === "string" ? parseHex(colour) : colour;
  const hex = toHex(c);
  return makeTable(`ramp-${hex.slice(1).toLowerCase()}`, name ?? `Black to ${hex}`, "single-hue", (i) => [
    Math.floor((c[0] * i * 2 + 255) / 510),
    Math.floor((c[1] * i * 2 + 255) / 510),
    Math.floor((c[2] * i * 2 + 255) / 510),
  ]);
}

/**
 * Samples a d3 interpolator at t = i / 255, so the first and last entries are the ends of the
 * scale. For the 256-colour d3 ramps (viridis, magma, inferno, plasma) this picks row i exactly
 * (d3 ramp: row floor(t·256), clamped to 255).
 */
export function tableFromInterpolator(id: string, name: string, interpolate: (t: number) => string): ColourTable {
  return makeTable(id, name, "perceptual", (i) => parseD3Colour(interpolate(i / 255)));
}

/** Okabe & Ito (2008) colours (shared/reference/okabe_ito_palette.json), in their usual order. */
export const OKABE_ITO_COLOURS = {
  black: "#000000",
  orange: "#E69F00",
  skyBlue: "#56B4E9",
  bluishGreen: "#009E73",
  yellow: "#F0E442",
  blue: "#0072B2",
  vermillion: "#D55E00",
  reddishPurple: "#CC79A7",
} as const;

/** Wong (2011): magenta/green instead of red/green for two channels. */
export const MAGENTA = "#FF00FF";
export const GREEN = "#00FF00";

/**
 * Colour-blind-safe channel colour sets for 2, 3 and 4 channels. Two: magenta/green (Wong 2011).
 * Three and four: Okabe & Ito colours (black excluded: invisible on the dark bench), chosen (our
 * choice) by the largest smallest CIEDE2000 distance between any two members under normal vision
 * and the three simulated deficiencies (Machado et al. 2009): 3 → 23.7 ΔE00 (the best subset);
 * 4 → 14.0 ΔE00. The best-scoring 4-subset (19.9) pairs sky blue with blue, which differ almost only
 * in lightness; in a fluorescence image lightness follows the signal, so we skip it.
 * tests/imaging/colour-tables.test.ts re-checks both sets against CVD_WARNING_THRESHOLD.
 */
export const CHANNEL_COLOUR_SETS: Readonly<Record<2 | 3 | 4, readonly string[]>> = {
  2: [MAGENTA, GREEN],
  3: [OKABE_ITO_COLOURS.skyBlue, OKABE_ITO_COLOURS.yellow, OKABE_ITO_COLOURS.vermillion],
  4: [OKABE_ITO_COLOURS.skyBlue, OKABE_ITO_COLOURS.yellow, OKABE_ITO_COLOURS.vermillion, OKABE_ITO_COLOURS.reddishPurple],
};

/** The safe set for `count` channels (1 → white, more than 4 → the 4-set repeated). */
export function safeChannelColours(count: number): string[] {
  if (count <= 1) return ["#FFFFFF"];
  const set = CHANNEL_COLOUR_SETS[Math.min(count, 4) as 2 | 3 | 4];
  return Array.from({ length: count }, (_, c) => set[c % set.length]);
}

/** Colours that get a built-in single-hue ramp: the safe sets plus plain red and blue primaries. */
const RAMP_COLOURS: readonly [string, string][] = [
  [MAGENTA, "Black to magenta"],
  [GREEN, "Black to green"],
  ["#FF0000", "Black to red"],
  ["#0000FF", "Black to blue"],
  ["#00FFFF", "Black to cyan"],
  ["#FFFF00", "Black to yellow"],
  [OKABE_ITO_COLOURS.orange, "Black to orange"],
  [OKABE_ITO_COLOURS.skyBlue, "Black to sky blue"],
  [OKABE_ITO_COLOURS.bluishGreen, "Black to bluish green"],
  [OKABE_ITO_COLOURS.yellow, "Black to soft yellow"],
  [OKABE_ITO_COLOURS.blue, "Black to deep blue"],
  [OKABE_ITO_COLOURS.vermillion, "Black to vermilion"],
  [OKABE_ITO_COLOURS.reddishPurple, "Black to reddish purple"],
];

function buildBuiltIns(): ColourTable[] {
  return [
    greyTable(),
    ...RAMP_COLOURS.map(([hex, name]) => singleHueTable(hex, name)),
    tableFromInterpolator("viridis", "Viridis (blue–green–yellow)", interpolateViridis),
    tableFromInterpolator("cividis", "Cividis (blue–yellow, colour-blind safe)", interpolateCividis),
    tableFromInterpolator("magma", "Magma (black–purple–cream)", interpolateMagma),
    tableFromInterpolator("inferno", "Inferno (black–red–yellow)", interpolateInferno),
    tableFromInterpolator("plasma", "Plasma (blue–pink–yellow)", interpolatePlasma),
  ];
}

/** Every built-in colour table, built once. Treat as read-only. */
export const builtInTables: readonly ColourTable[] = buildBuiltIns();

export function findTable(id: string): ColourTable | undefined {
  return builtInTables.find((t) => t.id === id);
}
