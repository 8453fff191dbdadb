// Colour-vision preview: simulateCvd() applies the Machado, Oliveira & Fernandes (2009) matrices,
// "A Physiologically-based Model for Simulation of Color Vision Deficiency", IEEE TVCG 15(6):1291,
// in LINEAR RGB: decode sRGB (IEC 61966-2-1), multiply, clip to [0, 1], re-encode.
//
// The matrices are copied from shared/reference/cvd_machado2009.json (the authors' pre-computed
// table, severity 0.0 … 1.0 in steps of 0.1); the app cannot read shared/ at run time, and
// tests/imaging/cvd.test.ts checks these constants equal the JSON exactly. The tritan model is the
// least reliable of the three (the JSON's caveats).
import type { Rgb } from "./colour-tables";
import { LITTLE_ENDIAN } from "./lut";

export type CvdKind = "protanopia" | "deuteranopia" | "tritanopia";
export const CVD_KINDS: readonly CvdKind[] = ["protanopia", "deuteranopia", "tritanopia"];

/** Row-major 3 × 3: out = M · [R, G, B]ᵀ in linear RGB. */
export type Matrix3 = readonly [readonly [number, number, number], readonly [number, number, number], readonly [number, number, number]];

/** Machado et al. (2009), index k = severity k / 10; index 10 is the full deficiency (…-opia). */
export const MACHADO_2009: Readonly<Record<"protanomaly" | "deuteranomaly" | "tritanomaly", readonly Matrix3[]>> = {
  protanomaly: [
    [[1, 0, 0], [0, 1, 0], [0, 0, 1]], // severity 0.0
    [[0.856167, 0.182038, -0.038205], [0.029342, 0.955115, 0.015544], [-0.00288, -0.001563, 1.004443]], // severity 0.1
    [[0.734766, 0.334872, -0.069637], [0.05184, 0.919198, 0.028963], [-0.004928, -0.004209, 1.009137]], // severity 0.2
    [[0.630323, 0.465641, -0.095964], [0.069181, 0.890046, 0.040773], [-0.006308, -0.007724, 1.014032]], // severity 0.3
    [[0.539009, 0.579343, -0.118352], [0.082546, 0.866121, 0.051332], [-0.007136, -0.011959, 1.019095]], // severity 0.4
    [[0.458064, 0.679578, -0.137642], [0.092785, 0.846313, 0.060902], [-0.007494, -0.016807, 1.024301]], // severity 0.5
    [[0.38545, 0.769005, -0.154455], [0.100526, 0.829802, 0.069673], [-0.007442, -0.02219, 1.029632]], // severity 0.6
    [[0.319627, 0.849633, -0.169261], [0.106241, 0.815969, 0.07779], [-0.007025, -0.028051, 1.035076]], // severity 0.7
    [[0.259411, 0.923008, -0.18242], [0.110296, 0.80434, 0.085364], [-0.006276, -0.034346, 1.040622]], // severity 0.8
    [[0.203876, 0.990338, -0.194214], [0.112975, 0.794542, 0.092483], [-0.005222, -0.041043, 1.046265]], // severity 0.9
    [[0.152286, 1.052583, -0.204868], [0.114503, 0.786281, 0.099216], [-0.003882, -0.048116, 1.051998]], // severity 1.0
  ],
  deuteranomaly: [
    [[1, 0, 0], [0, 1, 0], [0, 0, 1]], // severity 0.0
    [[0.866435, 0.177704, -0.044139], [0.049567, 0.939063, 0.01137], [-0.003453, 0.007233, 0.99622]], // severity 0.1
    [[0.760729, 0.319078, -0.079807], [0.090568, 0.889315, 0.020117], [-0.006027, 0.013325, 0.992702]], // severity 0.2
    [[0.675425, 0.43385, -0.109275], [0.125303, 0.847755, 0.026942], [-0.00795, 0.018572, 0.989378]], // severity 0.3
    [[0.605511, 0.52856, -0.134071], [0.155318, 0.812366, 0.032316], [-0.009376, 0.023176, 0.9862]], // severity 0.4
    [[0.547494, 0.607765, -0.155259], [0.181692, 0.781742, 0.036566], [-0.01041, 0.027275, 0.983136]], // severity 0.5
    [[0.498864, 0.674741, -0.173604], [0.205199, 0.754872, 0.039929], [-0.011131, 0.030969, 0.980162]], // severity 0.6
    [[0.457771, 0.731899, -0.18967], [0.226409, 0.731012, 0.042579], [-0.011595, 0.034333, 0.977261]], // severity 0.7
    [[0.422823, 0.781057, -0.203881], [0.245752, 0.709602, 0.044646], [-0.011843, 0.037423, 0.974421]], // severity 0.8
    [[0.392952, 0.82361, -0.216562], [0.263559, 0.69021, 0.046232], [-0.01191, 0.040281, 0.97163]], // severity 0.9
    [[0.367322, 0.860646, -0.227968], [0.280085, 0.672501, 0.047413], [-0.01182, 0.04294, 0.968881]], // severity 1.0
  ],
  tritanomaly: [
    [[1, 0, 0], [0, 1, 0], [0, 0, 1]], // severity 0.0
    [[0.92667, 0.092514, -0.019184], [0.021191, 0.964503, 0.014306], [0.008437, 0.054813, 0.93675]], // severity 0.1
    [[0.89572, 0.13333, -0.02905], [0.029997, 0.9454, 0.024603], [0.013027, 0.104707, 0.882266]], // severity 0.2
    [[0.905871, 0.127791, -0.033662], [0.026856, 0.941251, 0.031893], [0.01341, 0.148296, 0.838294]], // severity 0.3
    [[0.948035, 0.08949, -0.037526], [0.014364, 0.946792, 0.038844], [0.010853, 0.193991, 0.795156]], // severity 0.4
    [[1.017277, 0.027029, -0.044306], [-0.006113, 0.958479, 0.047634], [0.006379, 0.248708, 0.744913]], // severity 0.5
    [[1.104996, -0.046633, -0.058363], [-0.032137, 0.971635, 0.060503], [0.001336, 0.317922, 0.680742]], // severity 0.6
    [[1.193214, -0.109812, -0.083402], [-0.058496, 0.97941, 0.079086], [-0.002346, 0.403492, 0.598854]], // severity 0.7
    [[1.257728, -0.139648, -0.118081], [-0.078003, 0.975409, 0.102594], [-0.003316, 0.501214, 0.502102]], // severity 0.8
    [[1.278864, -0.125333, -0.153531], [-0.084748, 0.957674, 0.127074], [-0.000989, 0.601151, 0.399838]], // severity 0.9
    [[1.255528, -0.076749, -0.178779], [-0.078411, 0.930809, 0.147602], [0.004733, 0.691367, 0.3039]], // severity 1.0
  ],
};

const TABLE_FOR: Record<CvdKind, keyof typeof MACHADO_2009> = {
  protanopia: "protanomaly",
  deuteranopia: "deuteranomaly",
  tritanopia: "tritanomaly",
};

/**
 * The matrix for `kind` at `severity` (0 … 1). Between the published tenths the two neighbouring
 * matrices are interpolated linearly, element by element (as colour-science's
 * matrix_cvd_Machado2009 does; the authors publish only the tenths). At a tenth the published
 * matrix is returned unchanged.
 */
export function cvdMatrix(kind: CvdKind, severity = 1): Matrix3 {
  if (!(severity >= 0 && severity <= 1)) throw new RangeError(`severity must be 0…1, got ${severity}`);
  const table = MACHADO_2009[TABLE_FOR[kind]];
  if (!table) throw new RangeError(`Unknown colour-vision deficiency "${kind}"`);
  let x = severity * 10;
  // 0.3 × 10 is 3.0000000000000004 in doubles: snap so published severities use the published matrix.
  if (Math.abs(x - Math.round(x)) < 1e-9) x = Math.round(x);
  const lo = Math.floor(x);
  const w = x - lo;
  if (w === 0) return table[lo];
  const a = table[lo];
  const b = table[lo + 1];
  const mix = (r: 0 | 1 | 2, c: 0 | 1 | 2) => a[r][c] * (1 - w) + b[r][c] * w;
  const row = (r: 0 | 1 | 2) => [mix(r, 0), mix(r, 1), mix(r, 2)] as const;
  return [row(0), row(1), row(2)];
}

// sRGB transfer function, IEC 61966-2-1:1999 (shared/reference/srgb_constants.json).
export const SRGB = {
  decodeThreshold: 0.04045,
  encodeThreshold: 0.0031308,
  linearSlope: 12.92,
  exponent: 2.4,
  offset: 0.055,
  scale: 1.055,
} as const;

/** Gamma-encoded sRGB component in [0, 1] → linear light. */
export function srgbToLinear(c: number): number {
  return c <= SRGB.decodeThreshold ? c / SRGB.linearSlope : Math.pow((c + SRGB.offset) / SRGB.scale, SRGB.exponent);
}

/** Linear light in [0, 1] → gamma-encoded sRGB component in [0, 1]. */
export function linearToSrgb(x: number): number {
  return x <= SRGB.encodeThreshold ? SRGB.linearSlope * x : SRGB.scale * Math.pow(x, 1 / SRGB.exponent) - SRGB.offset;
}

/** 8-bit code → linear light, for every code (the fast path's decode table). */
export const DECODE_TABLE: Float64Array = Float64Array.from({ length: 256 }, (_, k) => srgbToLinear(k / 255));

/** Size of the fast path's encode table: linear light quantised to 1/4095 steps. */
export const ENCODE_STEPS = 4096;

/**
 * Linear light, quantised as round(x · 4095), → 8-bit code round(255 · encode(i / 4095)). The
 * quantisation costs at most one code against the exact path (tests check this for all inputs
 * of a test set), which a preview can afford.
 */
export const ENCODE_TABLE: Uint8Array = Uint8Array.from({ length: ENCODE_STEPS }, (_, i) => Math.round(255 * linearToSrgb(i / (ENCODE_STEPS - 1))));

const clamp01 = (x: number) => Math.min(Math.max(x, 0), 1);


/**
 * One colour through the exact path (double precision, no tables): decode, multiply, clip to
 * [0, 1], encode, round to 8 bits. For colour checks (warnings, mark choice), not for images.
 */
export function simulateCvdRgb(rgb: Rgb, kind: CvdKind, severity = 1): Rgb {
  const m = cvdMatrix(kind, severity);
  const lin = [srgbToLinear(rgb[0] / 255), srgbToLinear(rgb[1] / 255), srgbToLinear(rgb[2] / 255)];
  const out = m.map((row) => Math.round(255 * linearToSrgb(clamp01(row[0] * lin[0] + row[1] * lin[1] + row[2] * lin[2]))));
  return [out[0], out[1], out[2]];
}

type Rgba = Uint8ClampedArray | Uint32Array;

/** Fixed-point fraction bits of the encode-table index in the fast path. */
const FRAC = 8;

/**
 * The fast path's per-matrix tables: term[3r + c][k] = M[r][c] · linear(k) · 4095 · 2⁸, rounded to
 * an integer, so a simulated component is three lookups and two integer adds, already scaled to the
 * encode table's index (with 8 fraction bits). Plain arrays of small integers, not typed arrays:
 * once any buffer has been transferred V8 checks every typed-array read for detachment, and twelve
 * table reads per pixel made that check most of the cost (tests/bench/pixels.ts: about 2× faster).
 */
function termTables(m: Matrix3): number[][] {
  const scale = (ENCODE_STEPS - 1) * (1 << FRAC);
  const terms: number[][] = [];
  for (let r = 0; r < 3; r++) for (let c = 0; c < 3; c++) terms.push(Array.from(DECODE_TABLE, (x) => Math.round(m[r][c] * x * scale)));
  return terms;
}
/** ENCODE_TABLE as a plain array, for the same reason. */
const ENCODE_LIST: number[] = Array.from(ENCODE_TABLE);

/**
 * The fast path's loop over packed little-endian RGBA words, in its own function with every table a
 * parameter, which V8 compiles to tighter code than the same loop inline.
 */
function simulateWords(src: Int32Array, dst: Int32Array, terms: number[][], enc: number[]): void {
  const [t00, t01, t02, t10, t11, t12, t20, t21, t22] = terms;
  const top = ENCODE_STEPS - 1;
  const half = 1 << (FRAC - 1);
  for (let i = 0; i < src.length; i++) {
    const w = src[i];
    const r = w & 255;
    const g = (w >>> 8) & 255;
    const b = (w >>> 16) & 255;
    const r2 = Math.min(Math.max((t00[r] + t01[g] + t02[b] + half) >> FRAC, 0), top);
    const g2 = Math.min(Math.max((t10[r] + t11[g] + t12[b] + half) >> FRAC, 0), top);
    const b2 = Math.min(Math.max((t20[r] + t21[g] + t22[b] + half) >> FRAC, 0), top);
    dst[i] = (w & 0xff000000) | (enc[b2] << 16) | (enc[g2] << 8) | enc[r2];
  }
}

/**
 * Simulates a colour-vision deficiency on RGBA pixels (bytes R, G, B, A per pixel; a Uint32Array
 * is read as the same bytes, see lut.ts for the packing). Alpha is copied. Fast path: the sRGB
 * decode (256-entry table) and the matrix are folded into nine 256-entry integer tables, clipping
 * is integer min/max, and a 4096-entry table encodes back to sRGB, so there is no Math.pow per
 * pixel; results are within one code of simulateCvdRgb (tested). `out` may be `rgba` itself (in
 * place); by default a new array of the same type.
 */
export function simulateCvd<T extends Rgba>(rgba: T, kind: CvdKind, severity = 1, out?: T): T {
  const result = out ?? ((rgba instanceof Uint32Array ? new Uint32Array(rgba.length) : new Uint8ClampedArray(rgba.length)) as T);
  if (result.byteLength !== rgba.byteLength) throw new RangeError(`out has ${result.byteLength} bytes, rgba has ${rgba.byteLength}`);
  if (rgba.byteLength % 4 !== 0) throw new RangeError(`RGBA data must be whole pixels (4 bytes each), got ${rgba.byteLength} bytes`);
  const terms = termTables(cvdMatrix(kind, severity));
  const aligned = rgba.byteOffset % 4 === 0 && result.byteOffset % 4 === 0;
  if (LITTLE_ENDIAN && aligned) {
    // One 32-bit load and store per pixel: bytes R, G, B, A are bits 0–7, 8–15, 16–23, 24–31.
    const src = new Int32Array(rgba.buffer, rgba.byteOffset, rgba.byteLength / 4);
    const dst = new Int32Array(result.buffer, result.byteOffset, result.byteLength / 4);
    simulateWords(src, dst, terms, ENCODE_LIST);
    return result;
  }
  const [t00, t01, t02, t10, t11, t12, t20, t21, t22] = terms;
  const enc = ENCODE_LIST;
  const top = ENCODE_STEPS - 1;
  const half = 1 << (FRAC - 1);
  const src = new Uint8Array(rgba.buffer, rgba.byteOffset, rgba.byteLength);
  const dst = new Uint8Array(result.buffer, result.byteOffset, result.byteLength);
  for (let i = 0; i < src.length; i += 4) {
    const r = src[i];
    const g = src[i + 1];
    const b = src[i + 2];
    dst[i] = enc[Math.min(Math.max((t00[r] + t01[g] + t02[b] + half) >> FRAC, 0), top)];
    dst[i + 1] = enc[Math.min(Math.max((t10[r] + t11[g] + t12[b] + half) >> FRAC, 0), top)];
    dst[i + 2] = enc[Math.min(Math.max((t20[r] + t21[g] + t22[b] + half) >> FRAC, 0), top)];
    dst[i + 3] = src[i + 3];
  }
  return result;
}
