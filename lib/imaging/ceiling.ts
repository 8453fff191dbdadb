import type { Histogram } from "./histogram";

/** Bit depths cameras commonly deliver (common practice). */
export const COMMON_BIT_DEPTHS = [8, 10, 12, 14, 16] as const;

export interface Ceiling {
  /** Highest code the detector can produce. */
  ceiling: number;
  bits: number;
  /** Where the number came from: OME-XML SignificantBits, or inferred from the data's maximum. */
  from: "significant-bits" | "maximum";
}

/**
 * The ceiling rule of FACTS.md: OME-XML SignificantBits b gives 2^b − 1 (12-bit → 4095); otherwise the
 * smallest common bit depth that holds the maximum (common practice).
 */
export function ceilingFor(input: { significantBits?: number | null; max: number }): Ceiling {
  const b = input.significantBits;
  if (b !== undefined && b !== null) {
    if (!Number.isInteger(b) || b < 1 || b > 32) throw new RangeError(`SignificantBits must be 1…32, got ${b}`);
    return { ceiling: 2 ** b - 1, bits: b, from: "significant-bits" };
  }
  if (!Number.isFinite(input.max) || input.max < 0) throw new RangeError(`Maximum must be a finite value ≥ 0, got ${input.max}`);
  const bits = COMMON_BIT_DEPTHS.find((d) => input.max <= 2 ** d - 1);
  if (bits === undefined) throw new RangeError(`Maximum ${input.max} exceeds 16 bits; no integer ceiling applies`);
  return { ceiling: 2 ** bits - 1, bits, from: "maximum" };
}

/**
 * True when every value present is a multiple of 2^(16 − b): b-bit data shifted to the top of 16 bits
 * (FACTS.md). False for a plane with no non-zero value, which gives no evidence either way.
 */
export function isLeftJustified(hist: Histogram, b: number): boolean {
  if (!Number.isInteger(b) || b < 1 || b > 16) throw new RangeError(`Bit depth must be 1…16, got ${b}`);
  const step = 2 ** (16 - b);
  let nonZero = false;
  for (let v = 1; v < hist.length; v++) {
    if (hist[v] === 0) continue;
    if (v % step !== 0) return false;
    nonZero = true;
  }
  return nonZero;
}
