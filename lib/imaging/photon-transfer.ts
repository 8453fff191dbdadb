/**
 * Photon transfer: the EMVA 1288 mean–variance method for a camera's system gain K, temporal dark
 * (read) noise and saturation capacity, from a dark pair and pairs of flat frames at several
 * exposure levels. Sources, named beside each formula below:
 *   - EMVA Standard 1288, Release 4.0 Linear (European Machine Vision Association, 2021);
 *   - EMVA Standard 1288, Release 3.1 (2016), the same linear camera model and photon-transfer method;
 *   - the standard's reference implementation (github.com/EMVA1288/emva1288, process/results.py) for
 *     the two choices the text leaves to the implementer: the fit range (up to 70 % of saturation)
 *     and the quantisation floor of the dark variance (0.24 DN²).
 * Linear camera model: μy = μy.dark + K·μe; σy² = K²σd² + σq² + K·(μy − μy.dark), σq² = 1/12 DN².
 * So (σy² − σy.dark²) against (μy − μy.dark) is a line through the origin with slope K (DN per e⁻).
 * Pure functions over typed arrays: no DOM, no database.
 */

/** How a gain is written: EMVA 1288's K in DN per electron, or its inverse (e⁻ per DN) as data sheets often quote it. */
export type GainUnit = "dn_per_e" | "e_per_dn";

/** A gain written in `unit` → K in DN per e⁻ (the unit Fluxframe stores). */
export function gainToDnPerE(value: number, unit: GainUnit): number {
  if (!Number.isFinite(value) || value <= 0) throw new RangeError(`A gain must be a positive number, got ${value}`);
  return unit === "dn_per_e" ? value : 1 / value;
}

/** K in DN per e⁻ → the same gain written in `unit`. */
export function gainFromDnPerE(gainDnPerE: number, unit: GainUnit): number {
  if (!Number.isFinite(gainDnPerE) || gainDnPerE <= 0) throw new RangeError(`A gain must be a positive number, got ${gainDnPerE}`);
  return unit === "dn_per_e" ? gainDnPerE : 1 / gainDnPerE;
}

/** Photoelectrons behind a raw value: (DN − offset) / K (EMVA 1288 linear model, dark current left in the offset). */
export function photoelectrons(dn: number, offsetDn: number, gainDnPerE: number): number {
  return (dn - offsetDn) / gainDnPerE;
}

/**
 * Signal-to-noise ratio of N photoelectrons when photon shot noise dominates: photon counts are
 * Poisson, so the SD is √N and SNR = N/√N = √N (FACTS.md, Poisson statistics). 0 for N ≤ 0.
 */
export function shotNoiseSnr(electrons: number): number {
  return electrons > 0 ? Math.sqrt(electrons) : 0;
}

/** Quantisation noise of an ideal ADC, DN² (EMVA 1288: σq² = 1/12 DN²). */
export const QUANTISATION_VARIANCE = 1 / 12;

/**
 * Below this dark variance (DN²) the dark noise is dominated by quantisation and cannot be measured;
 * the value is raised to it and σd reported as an upper limit (EMVA 1288 reference implementation,
 * results.py sigma_y_dark).
 */
export const DARK_VARIANCE_FLOOR = 0.24;

/** The gain is fitted on levels up to this fraction of the saturation signal (EMVA 1288 R3.1/R4.0; reference implementation index_sensitivity_max). */
export const FIT_FRACTION_OF_SATURATION = 0.7;

/** Fewest flat levels a series must have: with fewer, the fit has too little to stand on after saturation is set aside. */
export const MIN_FLAT_LEVELS = 3;

/** Frames of a pair whose means differ by more than this fraction of the level's signal were not taken at one exposure. */
export const PAIR_MISMATCH_LIMIT = 0.1;

/** Mean and temporal variance of two frames at one exposure. */
export interface PairStats {
  /** Pixels per frame. */
  pixels: number;
  meanA: number;
  meanB: number;
  /** μy = Σ(A + B) / 2N, DN. */
  mean: number;
  /** σy² = Σ(A − B)² / 2N − (μA − μB)² / 2, DN². */
  variance: number;
}

/**
 * EMVA 1288 (R3.1 and R4.0 Linear): mean μy = Σ(A+B)/(2N); temporal variance from the difference
 * of the two frames, σy² = Σ((A − μA) − (B − μB))²/(2N) = Σ(A − B)²/(2N) − (μA − μB)²/2. The
 * difference cancels fixed-pattern noise (DSNU, PRNU, uneven light); the second term removes a
 * small change of the light between the two frames and is 0 when their means are equal.
 * Sums of integer frames stay exact while they are below 2^53 (512 × 512 16-bit frames are).
 */
export function pairStats(a: ArrayLike<number>, b: ArrayLike<number>): PairStats {
  const n = a.length;
  if (n === 0) throw new RangeError("A frame needs at least one pixel");
  if (b.length !== n) throw new RangeError(`The frames of a pair must be the same size (${n} and ${b.length} pixels)`);
  let sumA = 0;
  let sumB = 0;
  let sumD2 = 0;
  for (let i = 0; i < n; i++) {
    const x = a[i];
    const y = b[i];
    sumA += x;
    sumB += y;
    const d = x - y;
    sumD2 += d * d;
  }
  const meanA = sumA / n;
  const meanB = sumB / n;
  const diff = meanA - meanB;
  return { pixels: n, meanA, meanB, mean: (sumA + sumB) / (2 * n), variance: sumD2 / (2 * n) - (diff * diff) / 2 };
}

/** The series does not have the layout the method needs; the message says what to change. */
export class PhotonTransferError extends Error {
  constructor(message: string) {
    super(message);
    this.name = "PhotonTransferError";
  }
}

export interface PhotonTransferLevel {
  /** Position in the file's series: 0 is the first flat pair (pages 2 and 3). */
  index: number;
  /** Pages (0-based) of the pair's two frames. */
  pages: [number, number];
  /** μy, DN. */
  meanDn: number;
  /** μy − μy.dark, DN: the x of the photon-transfer plot. */
  signalDn: number;
  /** σy² − σy.dark², DN²: the y of the photon-transfer plot. */
  varianceDn2: number;
  /** μA − μB, DN. */
  pairDifferenceDn: number;
  /** On the linear part used for the fit. */
  inFit: boolean;
  /** varianceDn2 − K·signalDn, DN². */
  residualDn2: number;
  /** residualDn2 / (K·signalDn), as a fraction (0.01 = 1 %). */
  relativeResidual: number;
}

export interface PhotonTransferFit {
  dark: { pages: [number, number]; meanDn: number; varianceDn2: number; pairDifferenceDn: number };
  /** Flat levels in order of signal (the file's order is kept in `index`). */
  levels: PhotonTransferLevel[];
  pixelsPerFrame: number;
  /** System gain K, DN per e⁻, and its inverse. */
  gainDnPerE: number;
  gainEPerDn: number;
  /** Standard error of K from the scatter about the line (null with fewer than 3 levels in the fit). */
  gainStdErrorDnPerE: number | null;
  /** The dark mean, DN: the camera's offset at this exposure (dark current included). */
  offsetDn: number;
  /** Temporal dark noise σy.dark, DN, after the quantisation floor. */
  darkNoiseDn: number;
  /** σd = √(σy.dark² − 1/12) / K, electrons RMS. */
  readNoiseE: number;
  /** True when σy.dark² was below DARK_VARIANCE_FLOOR: readNoiseE is then an upper limit. */
  readNoiseIsUpperLimit: boolean;
  saturation: {
    /** The level (position in `levels`) where the variance peaks. */
    level: number;
    meanDn: number;
    signalDn: number;
    /** μe.sat = (μy.sat − μy.dark) / K, electrons. */
    capacityE: number;
    /**
     * False when the variance is still rising at the brightest level: the series stops before
     * saturation, so capacityE is a lower bound.
     */
    reached: boolean;
  };
  /** Maximum SNR = √μe.sat (EMVA 1288). */
  maxSnr: number;
  fit: {
    /** Levels with signal ≤ fraction × saturation signal were fitted. */
    fraction: number;
    maxSignalDn: number;
    levels: number;
    /** Coefficient of determination of the line through the origin (uncentred, 1 = perfect). */
    rSquared: number;
    /** Largest |relative residual| over the fitted levels. */
    maxAbsRelativeResidual: number;
  };
  /** Plain-language cautions (few levels, saturation not reached…). */
  warnings: string[];
}

/**
 * Pages of a photon-transfer series: 0 and 1 the dark pair, then 2 + 2i and 3 + 2i the flat pair of
 * level i. Throws PhotonTransferError when the count cannot be such a series.
 */
export function seriesPairs(pageCount: number): [number, number][] {
  if (!Number.isInteger(pageCount) || pageCount % 2 !== 0) {
    throw new PhotonTransferError(`A photon-transfer series is a dark pair followed by flat pairs, so it needs an even number of frames; this one has ${pageCount}.`);
  }
  const levels = pageCount / 2 - 1;
  if (levels < MIN_FLAT_LEVELS) {
    throw new PhotonTransferError(`A photon-transfer series needs a dark pair and at least ${MIN_FLAT_LEVELS} flat pairs (${2 + 2 * MIN_FLAT_LEVELS} frames); this one has ${pageCount} frame${pageCount === 1 ? "" : "s"}.`);
  }
  return Array.from({ length: pageCount / 2 }, (_, p) => [2 * p, 2 * p + 1]);
}

/**
 * Saturation: where the variance peaks (EMVA 1288). Walks down from the brightest level and stops at
 * the first maximum followed (downwards) by two lower levels, as the reference implementation does
 * (results.py index_u_ysat), so one noisy pair on the linear part is not taken for the peak.
 * `variances` are in order of signal.
 */
export function variancePeak(variances: readonly number[]): number {
  let peak = variances.length - 1;
  let max = -Infinity;
  for (let i = variances.length - 1; i >= 0; i--) {
    if (variances[i] >= max) {
      max = variances[i];
      peak = i;
    } else if (i === 0 || variances[i - 1] < max) break;
  }
  return peak;
}

/**
 * The fit from the statistics of each pair: `pairs[0]` the dark pair, the rest flat pairs.
 * Steps (EMVA 1288 R3.1 / R4.0 Linear, photon transfer):
 *  1. subtract the dark mean and the dark temporal variance from every level;
 *  2. saturation is the level where the variance peaks (the variance collapses once pixels clip);
 *  3. K = slope through the origin, Σxy / Σx², over the levels whose signal is at most 70 % of the
 *     saturation signal (the fit range of the reference implementation);
 *  4. σd = √(max(σy.dark², 0.24) − 1/12) / K; μe.sat = signal at saturation / K; SNRmax = √μe.sat.
 * Throws PhotonTransferError for a series that cannot be fitted, with the reason.
 */
export function fitPhotonTransfer(pairs: readonly PairStats[], pages: readonly [number, number][] = seriesPairs(pairs.length * 2)): PhotonTransferFit {
  if (pairs.length < MIN_FLAT_LEVELS + 1) {
    throw new PhotonTransferError(`A photon-transfer series needs a dark pair and at least ${MIN_FLAT_LEVELS} flat pairs; this one has ${pairs.length} pair${pairs.length === 1 ? "" : "s"}.`);
  }
  const [dark, ...flats] = pairs;
  const warnings: string[] = [];

  const raw = flats.map((f, index) => ({
    index,
    pages: pages[index + 1],
    meanDn: f.mean,
    signalDn: f.mean - dark.mean,
    varianceDn2: f.variance - dark.variance,
    pairDifferenceDn: f.meanA - f.meanB,
    pixels: f.pixels,
  }));
  for (const level of raw) {
    const [p, q] = level.pages;
    // The signal must stand clear of the dark level by more than the noise of a mean over the frames.
    const noise = 5 * Math.sqrt(Math.max(dark.variance, QUANTISATION_VARIANCE) / level.pixels);
    if (level.signalDn <= noise) {
      throw new PhotonTransferError(
        `Pages ${p} and ${q} (mean ${level.meanDn.toFixed(1)} DN) are not brighter than the dark pair, pages 0 and 1 (mean ${dark.mean.toFixed(1)} DN). The series must start with a dark pair, followed by flat pairs at increasing light.`,
      );
    }
    if (Math.abs(level.pairDifferenceDn) > PAIR_MISMATCH_LIMIT * level.signalDn) {
      throw new PhotonTransferError(
        `Pages ${p} and ${q} differ in mean by ${Math.abs(level.pairDifferenceDn).toFixed(1)} DN, more than ${PAIR_MISMATCH_LIMIT * 100} % of their signal: the two frames of a pair must be taken at the same exposure.`,
      );
    }
  }
  raw.sort((a, b) => a.signalDn - b.signalDn);

  const notRising = () =>
    new PhotonTransferError("The temporal variance does not rise with the mean on the linear part, so no gain can be fitted. Check that the flat pairs are at increasing light and the frames are raw counts.");
  if (!raw.some((l) => l.varianceDn2 > 0)) throw notRising();
  const peak = variancePeak(raw.map((l) => l.varianceDn2));
  // "Reached" only when a brighter level lies below the peak by more than 3 standard errors of a
  // two-frame variance estimate (SE ≈ σ²·√(2/N) for N difference pixels, Gaussian approximation).
  const peakVar = raw[peak].varianceDn2 + dark.variance;
  const margin = 3 * peakVar * Math.sqrt(2 / raw[peak].pixels);
  const reached = raw.slice(peak + 1).some((l) => l.varianceDn2 < raw[peak].varianceDn2 - margin);
  if (!reached) warnings.push("The variance is still rising at the brightest level: the series stops before saturation, so the saturation capacity is a lower bound.");

  const maxSignalDn = FIT_FRACTION_OF_SATURATION * raw[peak].signalDn;
  const fitted = raw.filter((l) => l.signalDn <= maxSignalDn);
  if (fitted.length < 2) {
    throw new PhotonTransferError(
      `Only ${fitted.length} flat level${fitted.length === 1 ? " lies" : "s lie"} below ${FIT_FRACTION_OF_SATURATION * 100} % of saturation (${maxSignalDn.toFixed(1)} DN above the dark level); the gain needs at least 2. Add exposures between dark and saturation.`,
    );
  }
  let sxy = 0;
  let sxx = 0;
  let syy = 0;
  for (const l of fitted) {
    sxy += l.signalDn * l.varianceDn2;
    sxx += l.signalDn * l.signalDn;
    syy += l.varianceDn2 * l.varianceDn2;
  }
  const k = sxy / sxx;
  if (!(k > 0) || !Number.isFinite(k)) throw notRising();
  if (fitted.length < 5) warnings.push(`Only ${fitted.length} levels lie on the linear part; EMVA 1288 asks for many more (at least 50 over the whole range), so treat the gain as approximate.`);

  const levels: PhotonTransferLevel[] = raw.map((l) => {
    const predicted = k * l.signalDn;
    const residualDn2 = l.varianceDn2 - predicted;
    return {
      index: l.index,
      pages: l.pages,
      meanDn: l.meanDn,
      signalDn: l.signalDn,
      varianceDn2: l.varianceDn2,
      pairDifferenceDn: l.pairDifferenceDn,
      inFit: l.signalDn <= maxSignalDn,
      residualDn2,
      relativeResidual: residualDn2 / predicted,
    };
  });
  const inFit = levels.filter((l) => l.inFit);
  const ssRes = inFit.reduce((s, l) => s + l.residualDn2 ** 2, 0);
  const gainStdErrorDnPerE = inFit.length >= 3 ? Math.sqrt(ssRes / (inFit.length - 1) / sxx) : null;
  const maxAbsRelativeResidual = Math.max(...inFit.map((l) => Math.abs(l.relativeResidual)));
  if (maxAbsRelativeResidual > 0.05) warnings.push(`A fitted level lies ${(maxAbsRelativeResidual * 100).toFixed(1)} % off the line: the camera may not be linear there, or a pair was not taken at steady light.`);

  const floored = dark.variance < DARK_VARIANCE_FLOOR;
  const darkVar = floored ? DARK_VARIANCE_FLOOR : dark.variance;
  if (floored) warnings.push(`The dark variance (${dark.variance.toFixed(3)} DN²) is below ${DARK_VARIANCE_FLOOR} DN², where quantisation dominates: the read noise is an upper limit.`);
  const readNoiseE = Math.sqrt(darkVar - QUANTISATION_VARIANCE) / k;
  const capacityE = raw[peak].signalDn / k;

  return {
    dark: { pages: pages[0], meanDn: dark.mean, varianceDn2: dark.variance, pairDifferenceDn: dark.meanA - dark.meanB },
    levels,
    pixelsPerFrame: dark.pixels,
    gainDnPerE: k,
    gainEPerDn: 1 / k,
    gainStdErrorDnPerE,
    offsetDn: dark.mean,
    darkNoiseDn: Math.sqrt(darkVar),
    readNoiseE,
    readNoiseIsUpperLimit: floored,
    saturation: { level: peak, meanDn: raw[peak].meanDn, signalDn: raw[peak].signalDn, capacityE, reached },
    maxSnr: shotNoiseSnr(capacityE),
    fit: { fraction: FIT_FRACTION_OF_SATURATION, maxSignalDn, levels: inFit.length, rSquared: 1 - ssRes / syy, maxAbsRelativeResidual },
    warnings,
  };
}

/** The whole method on frames in series order (dark pair, then flat pairs): statistics, then the fit. */
export function photonTransferFromFrames(frames: readonly ArrayLike<number>[]): PhotonTransferFit {
  const pages = seriesPairs(frames.length);
  return fitPhotonTransfer(
    pages.map(([p, q]) => pairStats(frames[p], frames[q])),
    pages,
  );
}
