// Sampling check: is the pixel size (and z step) fine enough for what the objective can resolve?
// Plain functions of a few numbers, no DOM: the dataset page and the tests call the same code.
//
// Sources:
// - Abbe lateral limit d = λ / (2·NA) and Rayleigh criterion d = 0.61·λ / NA: Wu, Merchant &
//   Castleman, Microscope Image Processing (2008), eq. 17.1, with the worked example 550 nm at
//   NA 1.4 ≈ 0.2 µm; the same in optics textbooks (Murphy & Davidson, Fundamentals of Light
//   Microscopy and Electronic Imaging, 2nd ed., 2012).
// - Nyquist convention used here: pixel size at the sample ≤ Abbe limit / 2, i.e. at most half the
//   smallest resolvable distance (Pawley, Handbook of Biological Confocal Microscopy, 3rd ed., 2006,
//   ch. 4). Many microscopists divide by 2.3 instead (common practice): pass `factor: 2.3`.
// - Axial (z), widefield, APPROXIMATE: z_min = 2·λ·n / NA², the distance from the centre of the
//   diffraction pattern to its first axial minimum (Inoué, ch. 1 of Pawley 2006). Other books define
//   axial resolution or depth of field differently (e.g. Wu et al. 2008 eq. 17.2: ≈ n·λ / NA²), and
//   confocal or deconvolved data resolve better, so the z advice is a rough guide only.

/** Pawley (2006) ch. 4: sample at least twice per smallest resolvable distance. */
export const NYQUIST_FACTOR = 2;
/** The stricter factor many microscopists use (common practice, no published source). */
export const NYQUIST_FACTOR_STRICT = 2.3;

export const NYQUIST_CONVENTION =
  "Nyquist pixel size = Abbe limit ÷ 2 (at most half the smallest resolvable distance; Pawley, Handbook of Biological Confocal Microscopy, 2006, ch. 4).";

/** Abbe lateral resolution limit in µm: λ / (2·NA), λ in nm. */
export function abbeLimitUm(wavelengthNm: number, na: number): number {
  return wavelengthNm / 1000 / (2 * na);
}

/** Rayleigh criterion in µm: 0.61·λ / NA, λ in nm. */
export function rayleighLimitUm(wavelengthNm: number, na: number): number {
  return (0.61 * wavelengthNm) / 1000 / na;
}

/** Largest pixel size at the sample that still samples the Abbe limit `factor` times (default 2). */
export function nyquistPixelUm(wavelengthNm: number, na: number, factor = NYQUIST_FACTOR): number {
  return abbeLimitUm(wavelengthNm, na) / factor;
}

/** Approximate widefield axial resolution in µm: 2·λ·n / NA² (Inoué, in Pawley 2006, ch. 1). */
export function axialLimitUm(wavelengthNm: number, na: number, refractiveIndex: number): number {
  return (2 * (wavelengthNm / 1000) * refractiveIndex) / (na * na);
}

/** Pixel size at the sample in µm: camera pixel pitch ÷ total magnification (geometry). */
export function pixelAtSampleUm(pitchUm: number, magnification: number): number {
  return pitchUm / magnification;
}

export interface SamplingInput {
  /** Numerical aperture of the objective. */
  na?: number | null;
  /** Emission wavelength in nm. */
  wavelengthNm?: number | null;
  /** Pixel size at the sample in µm (OME PhysicalSizeX). */
  pixelUm?: number | null;
  /** Refractive index of the immersion medium; only needed for the z check. */
  refractiveIndex?: number | null;
  /** Distance between z-slices in µm (OME PhysicalSizeZ); only needed for the z check. */
  zStepUm?: number | null;
  /** Samples per resolvable distance: 2 (default, Pawley 2006) or 2.3 (common practice). */
  factor?: number;
}

export type Verdict = "over-sampled" | "matched" | "under-sampled";

/** Names of inputs, as the UI shows them in "needs …" messages. */
export type InputName = "objective NA" | "emission wavelength" | "pixel size" | "refractive index" | "z step";

export type SamplingCheck =
  | { state: "needs"; missing: InputName[]; message: string }
  | { state: "invalid"; problems: string[]; message: string }
  | {
      state: "checked";
      abbeUm: number;
      rayleighUm: number;
      nyquistPixelUm: number;
      pixelUm: number;
      /** Actual pixel size ÷ Nyquist pixel size: above 1 is under-sampled. */
      ratio: number;
      verdict: Verdict;
      /** Over-sampled: n×n binning that still meets Nyquist (n = floor(Nyquist ÷ pixel) ≥ 2), else null. */
      binning: number | null;
      /** Storage saved by that binning, in % (1 − 1/n²). */
      storageCutPercent: number | null;
      /** Under-sampled: the pixel grid records detail only down to about this size (factor × pixel), else null. */
      detailLostBelowUm: number | null;
      advice: string;
    };

export type AxialCheck =
  | { state: "needs"; missing: InputName[]; message: string }
  | { state: "invalid"; problems: string[]; message: string }
  | {
      state: "checked";
      axialUm: number;
      nyquistStepUm: number;
      stepUm: number;
      /** Actual z step ÷ Nyquist z step: above 1 is under-sampled. */
      ratio: number;
      verdict: Verdict;
      /** Over-sampled: keeping every n-th slice (n = floor(Nyquist ÷ step) ≥ 2) still meets Nyquist, else null. */
      keepEvery: number | null;
      /** Storage saved by taking n times fewer slices, in % (1 − 1/n). */
      storageCutPercent: number | null;
      detailLostBelowUm: number | null;
      advice: string;
    };

const given = (v: number | null | undefined): v is number => v != null && !Number.isNaN(v);

/** Significant figures (3 by default) without trailing zeros: 0.196, 0.24, 12.5. Inputs are shown with 4 (0.1625 µm pixels). */
export function sig(v: number, digits = 3): string {
  if (!Number.isFinite(v)) return String(v);
  return String(Number(v.toPrecision(digits)));
}

function needs(missing: InputName[]) {
  return { state: "needs" as const, missing, message: `Needs ${joinWords(missing)}.` };
}

function joinWords(words: string[]): string {
  if (words.length <= 1) return words.join("");
  return `${words.slice(0, -1).join(", ")} and ${words[words.length - 1]}`;
}

// Limits of what we accept: NA up to 1.7 (the highest-NA objectives made are about 1.65–1.7, common
// practice), wavelengths as the dataset schema (200–2000 nm), refractive index 1 (air) to 2.
function problemsOf(input: SamplingInput): string[] {
  const problems: string[] = [];
  const { na, wavelengthNm, pixelUm, refractiveIndex, zStepUm, factor } = input;
  if (given(na) && !(na > 0 && na <= 1.7)) problems.push("The objective NA must be above 0 and at most 1.7.");
  if (given(wavelengthNm) && !(wavelengthNm >= 200 && wavelengthNm <= 2000)) problems.push("The emission wavelength must be 200–2000 nm.");
  if (given(pixelUm) && !(pixelUm > 0 && pixelUm <= 10_000)) problems.push("The pixel size must be above 0 µm and at most 10 000 µm.");
  if (given(refractiveIndex) && !(refractiveIndex >= 1 && refractiveIndex <= 2)) problems.push("The refractive index must be 1–2.");
  if (given(zStepUm) && !(zStepUm > 0 && zStepUm <= 10_000)) problems.push("The z step must be above 0 µm and at most 10 000 µm.");
  if (given(na) && given(refractiveIndex) && na > refractiveIndex) problems.push(`An NA of ${na} is not possible in a medium of refractive index ${refractiveIndex} (NA = n·sin θ ≤ n).`);
  if (factor !== undefined && !(factor >= 1 && factor <= 10)) problems.push("The Nyquist factor must be 1–10.");
  return problems;
}

// Relative tolerance so that a pixel of exactly the Nyquist size counts as matched despite float dust.
const EPS = 1e-9;

function classify(actual: number, nyquist: number): { ratio: number; verdict: Verdict; k: number } {
  const ratio = actual / nyquist;
  const k = nyquist / actual;
  if (ratio > 1 + EPS) return { ratio, verdict: "under-sampled", k };
  return { ratio, verdict: Math.floor(k + EPS) >= 2 ? "over-sampled" : "matched", k };
}

/** Lateral sampling check of one channel: Abbe and Rayleigh limits, Nyquist pixel size, ratio, advice. */
export function checkSampling(input: SamplingInput): SamplingCheck {
  const missing: InputName[] = [];
  if (!given(input.na)) missing.push("objective NA");
  if (!given(input.wavelengthNm)) missing.push("emission wavelength");
  if (!given(input.pixelUm)) missing.push("pixel size");
  const problems = problemsOf({ na: input.na, wavelengthNm: input.wavelengthNm, pixelUm: input.pixelUm, factor: input.factor });
  if (problems.length) return { state: "invalid", problems, message: problems.join(" ") };
  if (missing.length) return needs(missing);
  const na = input.na!, wl = input.wavelengthNm!, pixelUm = input.pixelUm!;
  const factor = input.factor ?? NYQUIST_FACTOR;
  const abbeUm = abbeLimitUm(wl, na);
  const nyquist = nyquistPixelUm(wl, na, factor);
  const { ratio, verdict, k } = classify(pixelUm, nyquist);
  let binning: number | null = null;
  let storageCutPercent: number | null = null;
  let detailLostBelowUm: number | null = null;
  let advice: string;
  if (verdict === "under-sampled") {
    detailLostBelowUm = factor * pixelUm;
    advice =
      `Under-sampled ${sig(ratio)}×: the objective resolves ${sig(abbeUm)} µm, but ${sig(pixelUm, 4)} µm pixels record detail only down to about ${sig(detailLostBelowUm)} µm; ` +
      `finer detail is lost and may alias into false patterns. Use pixels of at most ${sig(nyquist)} µm at the sample (more magnification or a smaller camera pixel).`;
  } else if (verdict === "over-sampled") {
    binning = Math.floor(k + EPS);
    storageCutPercent = 100 * (1 - 1 / (binning * binning));
    advice =
      `Over-sampled ${sig(k)}×: pixels of ${sig(pixelUm, 4)} µm are finer than the ${sig(nyquist)} µm that Nyquist needs. ` +
      `Binning ${binning}×${binning} would still meet Nyquist and cut storage by ${sig(storageCutPercent)} %.`;
  } else {
    advice = `Meets Nyquist: pixels of ${sig(pixelUm, 4)} µm are at most the ${sig(nyquist)} µm needed; binning 2×2 would under-sample.`;
  }
  return { state: "checked", abbeUm, rayleighUm: rayleighLimitUm(wl, na), nyquistPixelUm: nyquist, pixelUm, ratio, verdict, binning, storageCutPercent, detailLostBelowUm, advice };
}

/** Approximate axial (z) sampling check for widefield data; see the source note at the top. */
export function checkAxialSampling(input: SamplingInput): AxialCheck {
  const missing: InputName[] = [];
  if (!given(input.na)) missing.push("objective NA");
  if (!given(input.wavelengthNm)) missing.push("emission wavelength");
  if (!given(input.refractiveIndex)) missing.push("refractive index");
  if (!given(input.zStepUm)) missing.push("z step");
  const problems = problemsOf({ na: input.na, wavelengthNm: input.wavelengthNm, refractiveIndex: input.refractiveIndex, zStepUm: input.zStepUm, factor: input.factor });
  if (problems.length) return { state: "invalid", problems, message: problems.join(" ") };
  if (missing.length) return needs(missing);
  const factor = input.factor ?? NYQUIST_FACTOR;
  const stepUm = input.zStepUm!;
  const axialUm = axialLimitUm(input.wavelengthNm!, input.na!, input.refractiveIndex!);
  const nyquistStepUm = axialUm / factor;
  const { ratio, verdict, k } = classify(stepUm, nyquistStepUm);
  let keepEvery: number | null = null;
  let storageCutPercent: number | null = null;
  let detailLostBelowUm: number | null = null;
  let advice: string;
  if (verdict === "under-sampled") {
    detailLostBelowUm = factor * stepUm;
    advice = `Under-sampled in z ${sig(ratio)}× (approximate): steps of ${sig(stepUm, 4)} µm record detail along z only down to about ${sig(detailLostBelowUm)} µm; use steps of at most ${sig(nyquistStepUm)} µm.`;
  } else if (verdict === "over-sampled") {
    keepEvery = Math.floor(k + EPS);
    storageCutPercent = 100 * (1 - 1 / keepEvery);
    advice = `Over-sampled in z ${sig(k)}× (approximate): steps up to ${sig(nyquistStepUm)} µm would do; ${keepEvery}× fewer slices would cut storage by ${sig(storageCutPercent)} %.`;
  } else {
    advice = `Meets Nyquist in z (approximate): steps of ${sig(stepUm, 4)} µm are at most the ${sig(nyquistStepUm)} µm needed.`;
  }
  return { state: "checked", axialUm, nyquistStepUm, stepUm, ratio, verdict, keepEvery, storageCutPercent, detailLostBelowUm, advice };
}
