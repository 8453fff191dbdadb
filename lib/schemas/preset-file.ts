import { z } from "zod";
import { blendMode, createPresetBody, presetName, presetScope } from "./preset";

// The presets file: what "Export" writes and "Import" reads. Documented field by field in
// DEVELOPERS.md ("The presets file"). Version 1 is frozen: a change that an older Fluxframe could not
// read (a new required field, a field that changes meaning) needs version 2 and a reader for both.

export const PRESET_FILE_FORMAT = "fluxframe-presets";
export const PRESET_FILE_VERSION = 1;
/** Enough for a whole lab's presets; a larger file is more likely a mistake than a library. */
export const MAX_FILE_PRESETS = 200;
/** Characters of file text accepted by the import route (≈ 1 MB of ASCII). */
export const MAX_FILE_CHARS = 1_000_000;

/** One preset in the file: the portable part only (no ids, owner, version or dates). */
export const presetFileEntry = z.strictObject({
  name: presetName,
  /** Where the preset lived when it was exported; informational, import puts every preset in the scope chosen then. */
  scope: presetScope.optional(),
  blend: blendMode,
  /** The same channel objects as the API's presets (lib/schemas/preset.ts presetChannel). */
  channels: createPresetBody.shape.channels,
});
export type PresetFileEntry = z.infer<typeof presetFileEntry>;

export const presetFileV1 = z.strictObject({
  format: z.literal(PRESET_FILE_FORMAT, { message: `This is not a Fluxframe presets file: "format" must be "${PRESET_FILE_FORMAT}".` }),
  version: z.literal(PRESET_FILE_VERSION, { message: `This Fluxframe reads presets files of version ${PRESET_FILE_VERSION}.` }),
  exportedAt: z.iso.datetime({ message: "Use a UTC date and time such as 2026-01-31T12:00:00.000Z." }).optional(),
  presets: z
    .array(presetFileEntry)
    .min(1, "The file holds no presets.")
    .max(MAX_FILE_PRESETS, `A file holds at most ${MAX_FILE_PRESETS} presets.`),
});
export type PresetFileV1 = z.infer<typeof presetFileV1>;

/** What to do when an imported name is already used in the target scope. */
export const importClash = z.enum(["refuse", "rename"], { message: "Choose refuse or rename." });

export const importPresetsBody = z.strictObject({
  /** Every preset of the file goes here; a lab target needs presets.edit. */
  scope: presetScope,
  /** refuse (default): a clash answers 409 listing the names and nothing is stored; rename: "<name> (imported)". */
  onClash: importClash.default("refuse"),
  /** The file's text exactly as read, so line numbers in messages match the person's file. */
  text: z.string().max(MAX_FILE_CHARS, `The file is larger than ${MAX_FILE_CHARS.toLocaleString("en")} characters.`),
});
export type ImportPresetsBody = z.input<typeof importPresetsBody>;

/** `?ids=3,8,12` on the export route; without it, every preset the caller can see. */
export const exportPresetsQuery = z.object({
  ids: z
    .string()
    .regex(/^\d{1,10}(,\d{1,10}){0,499}$/, "List up to 500 preset ids separated by commas.")
    .transform((s) => [...new Set(s.split(",").map(Number))])
    .refine((ids) => ids.every((id) => id >= 1 && id <= 4294967295), "Preset ids are positive whole numbers.")
    .optional(),
});
