import { z } from "zod";

// Presets (named, reusable sets of channel mappings) and view states (one user's last state on one
// dataset). Field names follow the bench (workers/bench-api.ts ChannelView, components/bench ChannelState).

export const MAX_CHANNELS = 16;

export const hexColour = z.string().regex(/^#[0-9a-fA-F]{6}$/, "Use a colour written as #rrggbb.");
export const presetName = z.string().trim().min(1, "The preset needs a name.").max(120, "At most 120 characters.");
export const presetScope = z.enum(["private", "lab"], { message: "Choose private or lab." });
export const blendMode = z.enum(["add", "max"], { message: "Choose add or max." });

/** 1 = linear; anything else is a non-linear display mapping and is disclosed on figures. */
const gamma = z.number().min(0.1, "Gamma is at least 0.1.").max(5, "Gamma is at most 5.");
const tableId = z.string().trim().min(1).max(64, "At most 64 characters.").nullable();
/** Raw counts (DN), or corrected values when flat/dark correction is on; finite, not necessarily whole. */
const counts = z.number().finite().min(-1e9).max(1e9);
const percent = z.number().min(0, "Use 0 to 100.").max(100, "Use 0 to 100.");

const countsRange = z
  .strictObject({ mode: z.literal("counts"), black: counts, white: counts })
  .refine((r) => r.black < r.white, { message: "The black point must be below the white point.", path: ["white"] });
const percentileRange = z
  .strictObject({ mode: z.literal("percentiles"), low: percent, high: percent })
  .refine((r) => r.low < r.high, { message: "The low percentile must be below the high one.", path: ["high"] });

/** Black and white points: fixed raw counts, or percentiles of the plane resolved when applied (Fit). */
export const presetRange = z.discriminatedUnion("mode", [countsRange, percentileRange], {
  message: "Choose counts or percentiles.",
});

/** Same fields as the bench's ClipMarkSettings. */
export const clipMarks = z.strictObject({
  high: hexColour,
  low: hexColour,
  lowMode: z.enum(["black", "percent"]).optional(),
  lowPercent: percent.optional(),
  highPercent: percent.optional(),
});

/** How a preset channel finds its channel in a dataset: by name or emission wavelength, else by index. */
export const channelMatch = z.strictObject({
  name: z.string().trim().min(1).max(120).optional(),
  emissionNm: z.number().positive().max(10_000).nullable().optional(),
  index: z.number().int().min(0).max(10_000),
});

export const presetChannel = z.strictObject({
  match: channelMatch,
  visible: z.boolean(),
  colour: hexColour,
  tableId,
  gamma,
  range: presetRange,
  clipMarks: clipMarks.optional(),
});
export type PresetChannel = z.infer<typeof presetChannel>;

const presetChannels = z
  .array(presetChannel)
  .min(1, "A preset has at least one channel.")
  .max(MAX_CHANNELS, `A preset has at most ${MAX_CHANNELS} channels.`);

export const createPresetBody = z.strictObject({
  name: presetName,
  scope: presetScope,
  blend: blendMode,
  channels: presetChannels,
});
export type CreatePresetBody = z.infer<typeof createPresetBody>;

/** The scope of a preset is fixed once created (a lab preset is never pulled into someone's private list). */
export const updatePresetBody = z.strictObject({
  version: z.number().int().min(1),
  name: presetName.optional(),
  blend: blendMode.optional(),
  channels: presetChannels.optional(),
});
export type UpdatePresetBody = z.infer<typeof updatePresetBody>;

export const PresetOut = z.object({
  id: z.number(),
  labId: z.number(),
  ownerId: z.number().nullable(),
  name: z.string(),
  scope: presetScope,
  blend: blendMode,
  channels: presetChannels,
  version: z.number().int().min(1),
  createdAt: z.string(),
  updatedAt: z.string(),
});
export type PresetOut = z.infer<typeof PresetOut>;

// ---- View state -------------------------------------------------------------------------------

/** One channel as the bench holds it; black and white points in raw counts. */
export const viewChannel = z
  .strictObject({
    c: z.number().int().min(0).max(10_000),
    visible: z.boolean(),
    colour: hexColour,
    tableId,
    gamma,
    black: counts,
    white: counts,
  })
  .refine((ch) => ch.black < ch.white, { message: "The black point must be below the white point.", path: ["white"] });
export type ViewChannel = z.infer<typeof viewChannel>;

export const viewStateBody = z.strictObject({
  z: z.number().int().min(0),
  t: z.number().int().min(0),
  /** Screen pixels per image pixel. */
  zoom: z.number().positive().max(1024).optional(),
  /** Image point at the centre of the viewport, in image pixels. */
  pan: z.strictObject({ x: z.number().finite(), y: z.number().finite() }).optional(),
  channels: z
    .array(viewChannel)
    .min(1, "A view has at least one channel.")
    .max(MAX_CHANNELS, `A view has at most ${MAX_CHANNELS} channels.`)
    .refine((chs) => new Set(chs.map((ch) => ch.c)).size === chs.length, "Each channel appears once."),
  blend: blendMode,
  correction: z
    .strictObject({ flatId: z.number().int().positive().nullable(), darkId: z.number().int().positive().nullable(), on: z.boolean() })
    .optional(),
});
export type ViewStateBody = z.infer<typeof viewStateBody>;

export const ViewStateOut = z.object({
  datasetId: z.number(),
  z: z.number(),
  t: z.number(),
  zoom: z.number().optional(),
  pan: z.object({ x: z.number(), y: z.number() }).optional(),
  channels: z.array(viewChannel),
  blend: blendMode,
  correction: z.object({ flatId: z.number().nullable(), darkId: z.number().nullable(), on: z.boolean() }).optional(),
  updatedAt: z.string(),
});
export type ViewStateOut = z.infer<typeof ViewStateOut>;
