import { readFileSync } from "node:fs";
import { resolve } from "node:path";
import { describe, expect, test } from "vitest";
import { parseHex, toHex } from "@/lib/imaging/colour-tables";
import { cvdMatrix, CVD_KINDS, DECODE_TABLE, ENCODE_TABLE, linearToSrgb, MACHADO_2009, simulateCvd, simulateCvdRgb, SRGB, srgbToLinear } from "@/lib/imaging/cvd";
import { packRgba } from "@/lib/imaging/lut";
import { rng } from "../helpers/rng";

const ref = (name: string) => JSON.parse(readFileSync(resolve(import.meta.dirname, "../../../shared/reference", name), "utf8"));
const machado = ref("cvd_machado2009.json");
const srgb = ref("srgb_constants.json");


describe("Machado, Oliveira & Fernandes (2009) matrices", () => {
  test("equal the published table exactly, every severity 0.0 … 1.0 (reference JSON)", () => {
    const published = machado.all_severities_0_to_1_step_0_1 as Record<string, Record<string, number[][]>>;
    for (const [name, bySeverity] of Object.entries(published)) {
      const ours = MACHADO_2009[name.toLowerCase() as keyof typeof MACHADO_2009];
      expect(ours, name).toBeDefined();
      expect(ours.length).toBe(Object.keys(bySeverity).length);
      for (const [s, m] of Object.entries(bySeverity)) expect(ours[Math.round(Number(s) * 10)], `${name} ${s}`).toEqual(m);
    }
  });

  test("severity 1 gives the published protanopia/deuteranopia/tritanopia matrices", () => {
    for (const kind of CVD_KINDS) expect(cvdMatrix(kind, 1)).toEqual(machado.severity_1_0[kind]);
    expect(cvdMatrix("deuteranopia", 0.3)).toEqual(machado.all_severities_0_to_1_step_0_1.Deuteranomaly["0.3"]);
  });

  test("interpolates linearly between published severities", () => {
    const a = MACHADO_2009.protanomaly[2];
    const b = MACHADO_2009.protanomaly[3];
    const m = cvdMatrix("protanopia", 0.25);
    for (let r = 0; r < 3; r++) for (let c = 0; c < 3; c++) expect(m[r][c]).toBeCloseTo((a[r][c] + b[r][c]) / 2, 12);
  });
});

describe("sRGB transfer (IEC 61966-2-1)", () => {
  test("uses the published constants (reference JSON)", () => {
    const k = srgb.transfer_function.constants;
    expect(SRGB).toEqual({ decodeThreshold: k.decode_threshold, encodeThreshold: k.encode_threshold, linearSlope: k.linear_slope, exponent: k.exponent, offset: k.offset_a, scale: k.scale });
  });

  test("decodes and re-encodes every 8-bit code to itself", () => {
    for (let k = 0; k < 256; k++) expect(Math.round(255 * linearToSrgb(srgbToLinear(k / 255)))).toBe(k);
    // Mid grey #808080 is 21.6 % linear light (a well-known value of the IEC curve).
    expect(DECODE_TABLE[128]).toBeCloseTo(0.2158605, 6);
    expect([ENCODE_TABLE[0], ENCODE_TABLE[4095]]).toEqual([0, 255]);
  });
});

describe("simulateCvd", () => {
  const rows = machado.worked_examples_derived.rows as { input: string; [kind: string]: string | { linear_rgb_path: string } }[];

  test("the exact path reproduces the linear-RGB worked examples (reference JSON, derived from Machado et al. 2009)", () => {
    for (const row of rows) {
      for (const kind of CVD_KINDS) {
        expect(toHex(simulateCvdRgb(parseHex(row.input), kind)), `${row.input} ${kind}`).toBe((row[kind] as { linear_rgb_path: string }).linear_rgb_path);
      }
    }
  });

  test("the table path stays within one code of the exact path on random colours, and keeps alpha", () => {
    const next = rng(2009);
    const n = 5000;
    const rgba = Uint8ClampedArray.from({ length: n * 4 }, () => Math.floor(next() * 256));
    for (const kind of CVD_KINDS) {
      for (const severity of [1, 0.5, 0.35]) {
        const out = simulateCvd(rgba, kind, severity);
        let worst = 0;
        for (let i = 0; i < n; i++) {
          const exact = simulateCvdRgb([rgba[4 * i], rgba[4 * i + 1], rgba[4 * i + 2]], kind, severity);
          for (let k = 0; k < 3; k++) worst = Math.max(worst, Math.abs(out[4 * i + k] - exact[k]));
          expect(out[4 * i + 3]).toBe(rgba[4 * i + 3]);
        }
        expect(worst, `${kind} ${severity}`).toBeLessThanOrEqual(1);
      }
    }
  });

  test("works on packed Uint32 pixels and in place, and severity 0 leaves colours unchanged", () => {
    const words = Uint32Array.from([packRgba(255, 0, 0), packRgba(0, 255, 0), packRgba(128, 128, 128)]);
    const copy = words.slice();
    simulateCvd(words, "deuteranopia", 1, words);
    expect([...new Uint8Array(words.buffer, 0, 4)]).toEqual([...parseHex("#A39000"), 255]);
    expect(simulateCvd(copy, "protanopia", 0)).toEqual(copy);
  });

  test("gives the same result through the byte path (unaligned data) as through the word path", () => {
    const next = rng(3);
    const buffer = new Uint8ClampedArray(4 * 1000 + 1);
    for (let i = 0; i < buffer.length; i++) buffer[i] = Math.floor(next() * 256);
    const unaligned = buffer.subarray(1); // byteOffset 1: the word path cannot be used
    const aligned = Uint8ClampedArray.from(unaligned);
    expect([...simulateCvd(unaligned, "protanopia", 0.7)]).toEqual([...simulateCvd(aligned, "protanopia", 0.7)]);
  });

  test("rejects severities outside 0 … 1", () => {
    expect(() => simulateCvd(new Uint8ClampedArray(4), "tritanopia", 1.5)).toThrow(RangeError);
  });
});
