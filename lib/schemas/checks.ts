import { z } from "zod";

/** Fractions of all pixels (0.001 = 0.1 %), as lib/imaging/acquisition-check.ts CheckThresholds. */
const fraction = z.number().min(0, "At least 0.").max(1, "At most 1 (100 %).");

export const checkThresholdsBody = z
  .strictObject({
    saturatedCaution: fraction,
    saturatedReimage: fraction,
    planeSaturatedReimage: fraction,
    zeroCaution: fraction,
    zeroReimage: fraction,
    rangeUseCaution: fraction,
  })
  .superRefine((t, ctx) => {
    if (t.saturatedReimage <= t.saturatedCaution) ctx.addIssue({ code: "custom", path: ["saturatedReimage"], message: "Must be above the caution limit." });
    if (t.zeroReimage <= t.zeroCaution) ctx.addIssue({ code: "custom", path: ["zeroReimage"], message: "Must be above the caution limit." });
  });
export type CheckThresholdsBody = z.infer<typeof checkThresholdsBody>;
