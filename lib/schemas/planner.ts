import { z } from "zod";
import type { PlanInput } from "@/lib/imaging/planner";

// The planner's inputs travel in the page's query string (shareable), so every field is parsed from
// a string. Field names are short because they appear in URLs; `plannerFields` gives their labels.

interface NumberRules {
  min: number;
  max: number;
  int?: boolean;
}

/** Plain decimals only (Number("1e3") and Number("0x10") would parse, but nobody types those); a decimal comma is accepted. */
function readNumber(s: string, label: string, { min, max, int = false }: NumberRules, ctx: z.RefinementCtx): number {
  if (!/^[+]?(\d+([.,]\d*)?|[.,]\d+)$/.test(s)) {
    ctx.addIssue({ code: "custom", message: `The ${label} must be a number.` });
    return z.NEVER;
  }
  const n = Number(s.replace(",", "."));
  if (int && !Number.isInteger(n)) {
    ctx.addIssue({ code: "custom", message: `The ${label} must be a whole number.` });
    return z.NEVER;
  }
  if (n < min || n > max) {
    ctx.addIssue({ code: "custom", message: `The ${label} must be ${min.toLocaleString("en")}–${max.toLocaleString("en")}.` });
    return z.NEVER;
  }
  return n;
}

/** A required number typed into a form or read from a URL. */
export function numberField(label: string, rules: NumberRules) {
  return z
    .string()
    .trim()
    .transform((s, ctx): number => {
      if (s === "") {
        ctx.addIssue({ code: "custom", message: `Enter the ${label}.` });
        return z.NEVER;
      }
      return readNumber(s, label, rules, ctx);
    });
}

/** An optional number: empty text means "not given" (undefined). */
export function optionalNumberField(label: string, rules: NumberRules) {
  return z
    .string()
    .trim()
    .transform((s, ctx): number | undefined => (s === "" ? undefined : readNumber(s, label, rules, ctx)));
}

export const intervalUnits = { s: 1, min: 60, h: 3600 } as const;
export const durationUnits = { min: 60, h: 3600, d: 86_400 } as const;

export const plannerQuery = z
  .object({
    w: numberField("width", { min: 1, max: 65_536, int: true }),
    h: numberField("height", { min: 1, max: 65_536, int: true }),
    bpp: z.enum(["1", "2", "4"], { message: "Choose the bytes per pixel." }),
    c: numberField("number of channels", { min: 1, max: 64, int: true }),
    z: numberField("number of z-slices", { min: 1, max: 10_000, int: true }),
    p: numberField("number of positions", { min: 1, max: 10_000, int: true }),
    mode: z.enum(["duration", "count"], { message: "Choose how the time-lapse is given." }),
    iv: optionalNumberField("interval", { min: 0.001, max: 1_000_000 }),
    ivu: z.enum(["s", "min", "h"], { message: "Choose the interval's unit." }),
    dur: optionalNumberField("duration", { min: 0, max: 100_000 }),
    duru: z.enum(["min", "h", "d"], { message: "Choose the duration's unit." }),
    tp: optionalNumberField("number of time points", { min: 1, max: 10_000_000, int: true }),
    m1: numberField("first magnification", { min: 0.1, max: 1000 }),
    m2: numberField("second magnification", { min: 0.1, max: 1000 }),
    pitch: optionalNumberField("camera pixel pitch", { min: 0.1, max: 100 }),
  })
  .superRefine((q, ctx) => {
    // A duration means nothing without an interval; a count of time points may leave the interval
    // out (then there is no rate per hour or day).
    if (q.mode === "duration") {
      if (q.iv === undefined) ctx.addIssue({ code: "custom", path: ["iv"], message: "Enter the interval between time points." });
      if (q.dur === undefined) ctx.addIssue({ code: "custom", path: ["dur"], message: "Enter the duration." });
      if (q.iv !== undefined && q.dur !== undefined && (q.dur * durationUnits[q.duru]) / (q.iv * intervalUnits[q.ivu]) > 10_000_000) {
        ctx.addIssue({ code: "custom", path: ["dur"], message: "That is more than 10 000 000 time points; check the interval and duration." });
      }
    } else if (q.tp === undefined) {
      ctx.addIssue({ code: "custom", path: ["tp"], message: "Enter the number of time points." });
    }
  });
export type PlannerQuery = z.infer<typeof plannerQuery>;
export type PlannerFields = z.input<typeof plannerQuery>;
export type PlannerKey = keyof PlannerFields;

/** Defaults: a 2048 × 2048 16-bit camera (common sCMOS size), 2 channels, 20 slices, every 5 min for 12 h. */
export const plannerDefaults: PlannerFields = {
  w: "2048",
  h: "2048",
  bpp: "2",
  c: "2",
  z: "20",
  p: "1",
  mode: "duration",
  iv: "5",
  ivu: "min",
  dur: "12",
  duru: "h",
  tp: "100",
  m1: "40",
  m2: "10",
  pitch: "6.5",
};

export const plannerKeys = Object.keys(plannerDefaults) as PlannerKey[];

/** Reads the fields from a query string; unknown keys are ignored, missing ones take the defaults. */
export function plannerFieldsFrom(params: { get(key: string): string | null }): PlannerFields {
  const fields = { ...plannerDefaults };
  for (const key of plannerKeys) {
    const value = params.get(key);
    if (value !== null) (fields as Record<string, string>)[key] = value;
  }
  return fields;
}

/** The storage part of the query as planStorage() input. */
export function planInputOf(q: PlannerQuery): PlanInput {
  const intervalS = q.iv === undefined ? null : q.iv * intervalUnits[q.ivu];
  return {
    width: q.w,
    height: q.h,
    bytesPerPixel: Number(q.bpp),
    channels: q.c,
    zSlices: q.z,
    positions: q.p,
    intervalS,
    time: q.mode === "count" ? { mode: "count", timePoints: q.tp! } : { mode: "duration", durationS: q.dur! * durationUnits[q.duru] },
  };
}

export const CodecRatioOut = z.object({
  codec: z.string(),
  datasets: z.number(),
  rawBytes: z.number(),
  storedBytes: z.number(),
  ratio: z.number().nullable(),
});
export const CompressionOut = z.object({
  codecs: z.array(CodecRatioOut),
  overall: CodecRatioOut.nullable(),
});
export type CompressionOut = z.infer<typeof CompressionOut>;
