import { z } from "zod";
import { optionalNumberField } from "./planner";

// The dataset page's sampling check keeps what a person types in the page's query string
// (shareable, and NA is not part of the dataset's metadata). Every field is optional text.

/** Immersion media and their refractive indices (common practice; typical values at 589 nm). */
export const immersionMedia = [
  { id: "air", label: "Air", n: 1.0 },
  { id: "water", label: "Water", n: 1.333 },
  { id: "silicone", label: "Silicone", n: 1.406 },
  { id: "glycerol", label: "Glycerol", n: 1.47 },
  { id: "oil", label: "Oil", n: 1.518 },
] as const;

export const MAX_CHANNELS = 64;

export const samplingQuery = z.object({
  na: optionalNumberField("objective NA", { min: 0.01, max: 1.7 }),
  px: optionalNumberField("pixel size", { min: 0.001, max: 10_000 }),
  imm: z.enum(["", "air", "water", "silicone", "glycerol", "oil"], { message: "Choose an immersion medium." }),
  nyq: z.enum(["2", "2.3"], { message: "Choose a Nyquist factor." }),
  // Emission wavelengths typed for channels whose metadata has none, by channel index.
  em: z.array(optionalNumberField("emission wavelength", { min: 200, max: 2000 })).max(MAX_CHANNELS),
});
export type SamplingQuery = z.infer<typeof samplingQuery>;

/** The raw fields from a query string: na, px, imm, nyq and em0 … em63. */
export function samplingFieldsFrom(params: { get(key: string): string | null }, channels: number) {
  return {
    na: params.get("na") ?? "",
    px: params.get("px") ?? "",
    imm: params.get("imm") ?? "",
    nyq: params.get("nyq") ?? "2",
    em: Array.from({ length: Math.min(channels, MAX_CHANNELS) }, (_, c) => params.get(`em${c}`) ?? ""),
  };
}
export type SamplingFields = ReturnType<typeof samplingFieldsFrom>;
