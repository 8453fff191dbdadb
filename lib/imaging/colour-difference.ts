// Colour difference CIEDE2000 (CIE 142-2001; Sharma, Wu & Dalal, "The CIEDE2000 color-difference
// formula: Implementation notes, supplementary test data, and mathematical observations", Color
// Res. Appl. 30:21, 2005), computed by culori's differenceCiede2000 with kL = kC = kH = 1.
//
// Lab variant (our choice, documented): CIE Lab relative to D65 (culori "lab65"), i.e. the sRGB
// white point itself, with no chromatic adaptation. culori's differenceCiede2000 converts its
// arguments to lab65; d3-color's lab() and culori's "lab" are D50 and give different distances
// (e.g. #FF0000 has L = 53.24 at D65 and 54.29 at D50; shared/reference/srgb_constants.json). We
// compare colours on a self-luminous sRGB screen, whose white is D65, so D65 is the natural choice.
import { converter, differenceCiede2000 } from "culori";
import { parseHex, type Rgb } from "./colour-tables";
import { CVD_KINDS, simulateCvdRgb, type CvdKind } from "./cvd";

export interface Lab {
  l: number;
  a: number;
  b: number;
}

const ciede2000 = differenceCiede2000();
// kL = ∞ drops the lightness term (ΔL' / (kL·SL) = 0); kL is the formula's own parametric factor.
const ciede2000NoLightness = differenceCiede2000(Infinity, 1, 1);
const toLab65 = converter("lab65");

/** ΔE00 between two CIE Lab colours (any white point, as long as both use the same one). */
export function deltaE2000Lab(lab1: Lab, lab2: Lab, lightness: "include" | "ignore" = "include"): number {
  // culori's lab65 mode is only a container here: converting lab65 to lab65 is the identity.
  return (lightness === "ignore" ? ciede2000NoLightness : ciede2000)({ mode: "lab65", l: lab1.l, a: lab1.a, b: lab1.b }, { mode: "lab65", l: lab2.l, a: lab2.a, b: lab2.b });
}

/** 8-bit sRGB → CIE Lab (D65). */
export function srgbToLab(colour: Rgb | string): Lab {
  const [r, g, b] = typeof colour === "string" ? parseHex(colour) : colour;
  const lab = toLab65({ mode: "rgb", r: r / 255, g: g / 255, b: b / 255 });
  return { l: lab.l, a: lab.a, b: lab.b };
}

/** ΔE00 between two 8-bit sRGB colours, through Lab D65 (see the note at the top). */
export function deltaE2000(c1: Rgb | string, c2: Rgb | string): number {
  return deltaE2000Lab(srgbToLab(c1), srgbToLab(c2));
}

/**
 * Below this ΔE00 two visible channel colours are flagged as hard to tell apart. Our choice, no
 * published standard: about ten just-noticeable differences (≈ 1 ΔE00 for large patches side by
 * side), because channels are told apart in small, dim, separated structures rather than adjacent
 * flat patches; thresholds of this order are common practice in palette tools.
 *
 * Caveat measured in tests: with the standard formula, pure red vs pure green under deuteranopia is
 * still 19.5 ΔE00 apart, because they keep different lightness. In a fluorescence image lightness
 * follows the signal, so minPairDistance can also ignore lightness (`lightness: "ignore"`, kL → ∞),
 * which brings that pair to 2.7 while magenta/green stays at 59.8.
 */
export const CVD_WARNING_THRESHOLD = 10;

export type Vision = "normal" | CvdKind;

export interface PairDistance {
  /** The smallest ΔE00 over every pair and every vision checked; Infinity for fewer than 2 colours. */
  distance: number;
  /** Indices into `colours` of the closest pair (null for fewer than 2 colours). */
  pair: [number, number] | null;
  /** The vision under which that smallest distance occurs. */
  vision: Vision;
  /** Smallest distance per vision checked. */
  byVision: Partial<Record<Vision, number>>;
}

/**
 * The smallest ΔE00 between any two channel colours, under normal vision and under each simulated
 * deficiency (Machado et al. 2009, full severity unless `severity` is given). `simulate: false`
 * checks normal vision only; a list checks only those deficiencies. `lightness: "ignore"` compares
 * hue and chroma only (see CVD_WARNING_THRESHOLD).
 */
export function minPairDistance(
  colours: readonly (Rgb | string)[],
  options: { simulate?: boolean | readonly CvdKind[]; severity?: number; lightness?: "include" | "ignore" } = {},
): PairDistance {
  const kinds = options.simulate === false ? [] : options.simulate === true || options.simulate === undefined ? CVD_KINDS : options.simulate;
  const rgbs = colours.map((c) => (typeof c === "string" ? parseHex(c) : c));
  const visions: Vision[] = ["normal", ...kinds];
  const result: PairDistance = { distance: Infinity, pair: null, vision: "normal", byVision: {} };
  for (const vision of visions) {
    const labs = rgbs.map((c) => srgbToLab(vision === "normal" ? c : simulateCvdRgb(c, vision, options.severity ?? 1)));
    let best = Infinity;
    for (let i = 0; i < labs.length; i++) {
      for (let j = i + 1; j < labs.length; j++) {
        const d = deltaE2000Lab(labs[i], labs[j], options.lightness);
        if (d < best) best = d;
        if (d < result.distance) Object.assign(result, { distance: d, pair: [i, j], vision });
      }
    }
    result.byVision[vision] = best;
  }
  return result;
}
