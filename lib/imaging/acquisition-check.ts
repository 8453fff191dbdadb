// The acquisition check: from the statistics stored at ingest (never from the display), is a channel
// saturated or clipped at zero, how much of the detector range does it use, and how much longer
// could it have been exposed? Plain functions over numbers, so the same code runs on the server, in
// tests and (if wanted) in the browser.
//
// Sources and status of each rule (FACTS.md):
// - Ceiling: OME-XML SignificantBits b → 2^b − 1; else the detector profile's bit depth; else the
//   smallest common bit depth (8, 10, 12, 14, 16) that holds the maximum (common practice).
//   Left-justified data are multiples of 2^(16 − b) (common practice).
// - Saturated pixels cannot be quantified (Waters, J Cell Biol 185:1135, 2009). No published
//   acceptable fraction exists: the thresholds below are our defaults (common practice) and a lab
//   owner can change them.
// - Zero clipping: a camera adds an offset so read noise around zero is not clipped; many pixels at
//   0 mean the dark level is hidden (common practice).
// - Photoelectrons (DN − offset)/K with K the system gain in DN per electron (EMVA 1288).
// - Exposure headroom assumes a linear detector: signal above the offset scales with exposure.

export type Verdict = "ready" | "caution" | "re-image";

/** Limits that decide the verdict; fractions are of all pixels (0.001 = 0.1 %). Lab owners change them. */
export interface CheckThresholds {
  /** Any stack fraction at the ceiling above this → caution. */
  saturatedCaution: number;
  /** Stack fraction at the ceiling at or above this, or one plane at or above `planeSaturatedReimage` → re-image. */
  saturatedReimage: number;
  planeSaturatedReimage: number;
  /** Fraction of pixels at 0 at or above these → caution / re-image. */
  zeroCaution: number;
  zeroReimage: number;
  /** Range use below this → caution (little of the detector's range used). */
  rangeUseCaution: number;
}

export const DEFAULT_THRESHOLDS: CheckThresholds = {
  saturatedCaution: 0,
  saturatedReimage: 0.001,
  planeSaturatedReimage: 0.01,
  zeroCaution: 0.001,
  zeroReimage: 0.05,
  rangeUseCaution: 0.1,
};

export interface DetectorInfo {
  name: string;
  bitDepth: number;
  offsetDn: number;
  /** System gain K in DN per electron (EMVA 1288). */
  gainDnPerE: number;
  readNoiseE: number | null;
}

export interface ChannelInput {
  c: number;
  name: string;
  /** Pixels over the whole stack for this channel. */
  pixels: number;
  max: number;
  countAtCeiling: number;
  countAtZero: number;
  /** Stored percentiles ("0.01" … "99.99") of the whole channel. */
  percentiles: Record<string, number>;
  /** Smallest b for which every value is a multiple of 2^(16 − b), when found at ingest. */
  leftJustifiedBits?: number | null;
  /** Per plane: where saturation sits. */
  planes: { z: number; t: number; pixels: number; countAtCeiling: number }[];
}

export interface CheckInput {
  /** The ceiling used at ingest for the stored counts, and how it was found. */
  storedCeiling: number;
  significantBits: number | null;
  /** 16 for 16-bit containers, 8 for 8-bit. */
  containerBits: number;
  detector: DetectorInfo | null;
  channels: ChannelInput[];
  thresholds?: CheckThresholds;
}

export interface ChannelCheck {
  c: number;
  name: string;
  ceiling: number;
  ceilingFrom: string;
  /** False when the stored counts at the ceiling were taken at another ceiling (see `notes`). */
  ceilingCountExact: boolean;
  saturated: { count: number; fraction: number; zRanges: string; tRanges: string; worstPlane: { z: number; t: number; fraction: number } | null };
  zero: { count: number; fraction: number };
  offset: { dn: number; from: "detector profile" | "estimated (0.01 % point of the stack)" };
  /** (p99.99 − offset) / (ceiling − offset), 0…1. */
  rangeUse: number;
  /** Distinguishable levels between the offset and the 99.99 % point: in read-noise steps with a profile, else in DN. */
  effectiveLevels: { count: number; bits: number; unit: "read-noise steps" | "DN" };
  /** How many times longer the exposure could be before the brightest 0.01 % reach the ceiling (linear detector). */
  headroom: number;
  /** With a detector profile: the 99.99 % point in photoelectrons, and its shot-noise SNR √N. */
  photoelectrons: { p9999: number; snr: number } | null;
  verdict: Verdict;
  reasons: string[];
  advice: string[];
  notes: string[];
}

const pct = (f: number) => `${(100 * f).toFixed(f > 0 && f < 0.0001 ? 4 : f < 0.01 ? 3 : 1)} %`;

/** 1-based ranges of the sorted distinct indices, e.g. [11, 12, 13, 29] → "12–14, 30". */
export function formatRanges(indices: number[]): string {
  const sorted = [...new Set(indices)].sort((a, b) => a - b);
  const parts: string[] = [];
  for (let i = 0; i < sorted.length; ) {
    let j = i;
    while (j + 1 < sorted.length && sorted[j + 1] === sorted[j] + 1) j++;
    parts.push(i === j ? String(sorted[i] + 1) : `${sorted[i] + 1}–${sorted[j] + 1}`);
    i = j + 1;
  }
  return parts.join(", ");
}

/** Which ceiling applies and why (the order of FACTS.md, with the detector profile between). */
export function chooseCeiling(input: Pick<CheckInput, "significantBits" | "detector" | "storedCeiling" | "containerBits">, max: number, leftJustifiedBits?: number | null): { ceiling: number; from: string } {
  if (input.significantBits) return { ceiling: 2 ** input.significantBits - 1, from: `OME-XML SignificantBits = ${input.significantBits}` };
  if (input.detector) return { ceiling: 2 ** input.detector.bitDepth - 1, from: `detector profile "${input.detector.name}" (${input.detector.bitDepth}-bit)` };
  if (leftJustifiedBits && input.containerBits === 16) {
    const step = 2 ** (16 - leftJustifiedBits);
    return { ceiling: 65536 - step, from: `left-justified ${leftJustifiedBits}-bit data (every value a multiple of ${step})` };
  }
  const bits = [8, 10, 12, 14, 16].find((b) => max <= 2 ** b - 1) ?? 16;
  return { ceiling: 2 ** bits - 1, from: `smallest common bit depth holding the maximum ${max}: ${bits}-bit` };
}

/**
 * Extrapolates the bright tail geometrically (p99 → p99.9 → p99.99) to guess where the clipped
 * brightest 0.01 % would have been: a heuristic (common practice, not a published method), used only
 * to suggest by how much to shorten an exposure that saturated.
 */
export function extrapolatedBrightest(percentiles: Record<string, number>, offset: number): number | null {
  const p99 = percentiles["99"] - offset;
  const p999 = percentiles["99.9"] - offset;
  if (!(p99 > 0) || !(p999 > 0)) return null;
  const ratio = Math.max(1, p999 / p99);
  return offset + p999 * ratio;
}

export function checkChannel(input: CheckInput, ch: ChannelInput): ChannelCheck {
  const th = input.thresholds ?? DEFAULT_THRESHOLDS;
  const notes: string[] = [];
  const reasons: string[] = [];
  const advice: string[] = [];
  const { ceiling, from } = chooseCeiling(input, ch.max, ch.leftJustifiedBits);

  // Counts at the ceiling were stored for the ingest ceiling: exact when the ceilings agree, and
  // exactly zero when the chosen ceiling is above every value.
  let count: number;
  let exact = true;
  if (ceiling === input.storedCeiling) count = ch.countAtCeiling;
  else if (ceiling > ch.max) count = 0;
  else {
    count = ch.countAtCeiling;
    exact = false;
    notes.push(
      ch.max > ceiling
        ? `Values up to ${ch.max} lie above the ${ceiling} ceiling: the bit depth of the profile or metadata does not fit these data.`
        : `Counts at the ceiling were stored for ${input.storedCeiling}; the count at ${ceiling} is not known exactly.`,
    );
  }
  const fraction = ch.pixels ? count / ch.pixels : 0;
  const satPlanes = ch.planes.filter((p) => p.countAtCeiling > 0 && exact && ceiling === input.storedCeiling);
  const worst = satPlanes.reduce<{ z: number; t: number; fraction: number } | null>((best, p) => {
    const f = p.pixels ? p.countAtCeiling / p.pixels : 0;
    return !best || f > best.fraction ? { z: p.z, t: p.t, fraction: f } : best;
  }, null);
  const zRanges = formatRanges(satPlanes.map((p) => p.z));
  const tRanges = formatRanges(satPlanes.map((p) => p.t));

  const zeroFraction = ch.pixels ? ch.countAtZero / ch.pixels : 0;
  const offset = input.detector
    ? { dn: input.detector.offsetDn, from: "detector profile" as const }
    : { dn: ch.percentiles["0.01"] ?? 0, from: "estimated (0.01 % point of the stack)" as const };
  const high = ch.percentiles["99.99"] ?? ch.max;
  const span = Math.max(1e-9, ceiling - offset.dn);
  const rangeUse = Math.min(1, Math.max(0, (high - offset.dn) / span));
  const noiseDn = input.detector?.readNoiseE ? input.detector.readNoiseE * input.detector.gainDnPerE : null;
  const levels = Math.max(0, (high - offset.dn) / (noiseDn ?? 1));
  const headroom = high > offset.dn ? span / (high - offset.dn) : Infinity;
  const photoelectrons = input.detector ? { p9999: Math.max(0, (high - offset.dn) / input.detector.gainDnPerE), snr: Math.sqrt(Math.max(0, (high - offset.dn) / input.detector.gainDnPerE)) } : null;

  let verdict: Verdict = "ready";
  const raise = (v: Verdict) => {
    if (v === "re-image" || (v === "caution" && verdict === "ready")) verdict = v;
  };
  const where = [tRanges && `t ${tRanges}`, zRanges && `z ${zRanges}`].filter(Boolean).join(", ");
  if (count > 0 && fraction > th.saturatedCaution) {
    const bad = fraction >= th.saturatedReimage || (worst !== null && worst.fraction >= th.planeSaturatedReimage);
    raise(bad ? "re-image" : "caution");
    reasons.push(`${pct(fraction)} of pixels (${count}) at the ${ceiling} ceiling${where ? ` in ${where}` : ""}.`);
    const brightest = extrapolatedBrightest(ch.percentiles, offset.dn);
    if (brightest && brightest > ceiling) {
      const factor = (0.9 * span) / (brightest - offset.dn);
      advice.push(`Shorten the exposure (or lower the gain or light) by about ${Math.round(100 * (1 - factor))} %: saturated pixels cannot be quantified, and regions containing them must not be measured.`);
    } else {
      advice.push("Shorten the exposure (or lower the gain or light) until no pixel reaches the ceiling; exclude saturated pixels from any measurement.");
    }
  }
  if (zeroFraction >= th.zeroCaution) {
    raise(zeroFraction >= th.zeroReimage ? "re-image" : "caution");
    reasons.push(`${pct(zeroFraction)} of pixels at 0: the dark level is hidden by clipping.`);
    advice.push("Set the camera offset (bias) so that a dark frame sits above 0 (many cameras use about 100 DN); background subtraction is wrong on clipped data.");
  }
  if (rangeUse < th.rangeUseCaution && count === 0) {
    raise("caution");
    reasons.push(`Only ${pct(rangeUse)} of the range between the offset and the ceiling is used.`);
    if (Number.isFinite(headroom)) advice.push(`The exposure could be about ${headroom >= 10 ? Math.floor(headroom) : headroom.toFixed(1)}× longer before the brightest 0.01 % reach the ceiling (if the sample allows).`);
  }
  if (ch.leftJustifiedBits && input.containerBits === 16 && !input.significantBits) {
    notes.push(`Every value is a multiple of ${2 ** (16 - ch.leftJustifiedBits)}: ${ch.leftJustifiedBits}-bit data stored left-justified in 16 bits.`);
  }
  if (!input.detector) notes.push("No detector profile: the offset is estimated and levels are counted in DN steps.");
  return {
    c: ch.c,
    name: ch.name,
    ceiling,
    ceilingFrom: from,
    ceilingCountExact: exact,
    saturated: { count, fraction, zRanges, tRanges, worstPlane: worst },
    zero: { count: ch.countAtZero, fraction: zeroFraction },
    offset,
    rangeUse,
    effectiveLevels: { count: Math.round(levels), bits: levels > 1 ? Math.log2(levels) : 0, unit: noiseDn ? "read-noise steps" : "DN" },
    headroom,
    photoelectrons,
    verdict,
    reasons,
    advice,
    notes,
  };
}

export function checkDataset(input: CheckInput): { verdict: Verdict; channels: ChannelCheck[] } {
  const channels = input.channels.map((ch) => checkChannel(input, ch));
  const order: Verdict[] = ["ready", "caution", "re-image"];
  const verdict = channels.reduce<Verdict>((worst, ch) => (order.indexOf(ch.verdict) > order.indexOf(worst) ? ch.verdict : worst), "ready");
  return { verdict, channels };
}
