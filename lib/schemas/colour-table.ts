import { z } from "zod";

// Custom colour tables: colour stops interpolated in a perceptual space (lib/imaging/table-editor.ts)
// or 256 imported entries, private to a person, shared with the lab, or public (every signed-in
// member of any lab may read it; only editors and owners of its own lab change it).

export const COLOUR_TABLE_ENTRIES = 256;
export const MAX_STOPS = 32;

const hex = z.string().regex(/^#[0-9a-fA-F]{6}$/, "Use a colour written as #rrggbb.");

export const colourTableName = z.string().trim().min(1, "The colour table needs a name.").max(120, "At most 120 characters.");
export const colourTableScope = z.enum(["private", "lab", "public"], { message: "Choose private, lab or public." });
export type ColourTableScope = z.infer<typeof colourTableScope>;
export const interpolationSpace = z.enum(["oklab", "cielab"], { message: "Choose OKLab or CIELAB." });
export type InterpolationSpace = z.infer<typeof interpolationSpace>;

/** One colour stop: where on the ramp (0 = first entry, 1 = last) and which colour. */
export const colourStop = z.strictObject({
  position: z.number().min(0, "Positions run from 0 to 1.").max(1, "Positions run from 0 to 1."),
  colour: hex.transform((s) => s.toLowerCase()),
});
export type ColourStop = z.infer<typeof colourStop>;

export const colourStops = z
  .array(colourStop)
  .min(2, "A colour table needs at least two stops.")
  .max(MAX_STOPS, `At most ${MAX_STOPS} stops.`)
  .refine((stops) => stops.some((s) => s.position === 0) && stops.some((s) => s.position === 1), {
    message: "Put one stop at position 0 and one at position 1, so every entry has a colour.",
  });

/** 256 entries × r, g, b as 1,536 hexadecimal digits (entry i is characters 6i … 6i + 5). */
export const rgbHex = z
  .string()
  .regex(/^[0-9a-f]*$/i, "The entries must be hexadecimal digits.")
  .length(COLOUR_TABLE_ENTRIES * 6, `Exactly ${COLOUR_TABLE_ENTRIES} entries of 6 hexadecimal digits.`)
  .transform((s) => s.toLowerCase());

/** A table made in the editor: the server computes the 256 entries from the stops. */
export const createColourTableBody = z.strictObject({
  name: colourTableName,
  scope: colourTableScope,
  space: interpolationSpace,
  stops: colourStops,
});
export type CreateColourTableBody = z.infer<typeof createColourTableBody>;

/**
 * Rename, or replace the stops (with their space). The scope is fixed once created, as for presets;
 * `version` names the version the change was based on (a stale one gets 409).
 */
export const updateColourTableBody = z
  .strictObject({
    version: z.number().int().min(1),
    name: colourTableName.optional(),
    space: interpolationSpace.optional(),
    stops: colourStops.optional(),
  })
  .refine((b) => (b.space === undefined) === (b.stops === undefined), {
    message: "Send the stops and their interpolation space together.",
    path: ["stops"],
  });
export type UpdateColourTableBody = z.infer<typeof updateColourTableBody>;

/** A file to import: its text, the format it is in, and where to keep the table. */
export const importColourTableBody = z.strictObject({
  format: z.enum(["csv", "json"], { message: "Choose CSV or JSON." }),
  // 256 CSV rows are under 4 KB and a JSON file under 16 KB; 256 KB leaves room for spacing.
  content: z.string().max(256 * 1024, "The file is larger than 256 KB; a colour table is far smaller."),
  /** Required for CSV (the file has no name in it); for JSON the file's own name is used when missing. */
  name: colourTableName.optional(),
  scope: colourTableScope,
});
export type ImportColourTableBody = z.infer<typeof importColourTableBody>;

export const exportFormat = z.enum(["csv", "json"], { message: "Choose csv or json." });

export const ColourTableOut = z.object({
  id: z.number(),
  labId: z.number(),
  /** The lab it belongs to: public tables of other labs are listed too. */
  labName: z.string(),
  ownerId: z.number().nullable(),
  ownerName: z.string().nullable(),
  name: z.string(),
  scope: colourTableScope,
  /** Null for an imported table without stops (its entries are the table). */
  space: interpolationSpace.nullable(),
  stops: z.array(colourStop).nullable(),
  rgb: rgbHex,
  version: z.number().int().min(1),
  /** Whether the caller may rename, change or delete it (the UI hides what the server would refuse). */
  canEdit: z.boolean(),
  createdAt: z.string(),
  updatedAt: z.string(),
});
export type ColourTableOut = z.infer<typeof ColourTableOut>;

// ---- The JSON file format ------------------------------------------------------------------------

export const COLOUR_TABLE_FILE_FORMAT = "fluxframe-colour-table";
export const COLOUR_TABLE_FILE_VERSION = 1;

/**
 * Version 1 of the JSON file (docs in README.md, "Colour tables"):
 * { format: "fluxframe-colour-table", version: 1, name, space: "oklab" | "cielab" | null,
 *   stops: [{ position, colour }] | null, entries: ["#rrggbb" × 256] }.
 * `entries` is the table; stops, when present, say how it was made and must reproduce it.
 */
export const colourTableFileV1 = z.strictObject({
  format: z.literal(COLOUR_TABLE_FILE_FORMAT, { message: `"format" must be "${COLOUR_TABLE_FILE_FORMAT}".` }),
  version: z.literal(COLOUR_TABLE_FILE_VERSION, { message: `Only version ${COLOUR_TABLE_FILE_VERSION} of this file format is known.` }),
  name: colourTableName,
  space: interpolationSpace.nullable(),
  stops: colourStops.nullable(),
  entries: z
    .array(hex.transform((s) => s.toLowerCase()))
    .length(COLOUR_TABLE_ENTRIES, `A colour table has exactly ${COLOUR_TABLE_ENTRIES} entries.`),
}).refine((f) => (f.space === null) === (f.stops === null), {
  message: "Give both the stops and their interpolation space, or neither.",
  path: ["space"],
});
export type ColourTableFileV1 = z.infer<typeof colourTableFileV1>;
