import { z } from "zod";

// The JSON sidecar of an exported figure: everything needed to reproduce the PNG from the stored
// file (which dataset, checked by SHA-256; which plane; every channel's mapping; the blend and the
// overlays) and to find the image pixels inside the PNG. Written next to the PNG and embedded in it
// (an iTXt chunk, keyword FIGURE_SIDECAR_KEYWORD). A change to the meaning of a field needs a new
// `version`; readers refuse versions they do not know rather than guessing.

export const FIGURE_SIDECAR_FORMAT = "fluxframe-figure";
export const FIGURE_SIDECAR_VERSION = 1;
/** PNG text keyword (1–79 Latin-1 characters, PNG spec 11.3.4) under which the sidecar is embedded. */
export const FIGURE_SIDECAR_KEYWORD = "fluxframe-figure";

const hex = z.string().regex(/^#[0-9a-fA-F]{6}$/, "Use a colour written as #rrggbb.");
const count = z.number().int().min(0);
/** Raw counts (DN), or corrected values when flat/dark correction is on. */
const level = z.number().finite();
const rect = z.strictObject({ x: count, y: count, width: z.number().int().min(1), height: z.number().int().min(1) });

export const figureChannel = z
  .strictObject({
    c: count,
    name: z.string(),
    /** The single-hue ramp colour; ignored for drawing when tableId names a colour table. */
    colour: hex,
    tableId: z.string().min(1).nullable(),
    black: level,
    white: level,
    /** 1 = linear; anything else is a non-linear display mapping (level = 255 · t^gamma). */
    gamma: z.number().positive().finite(),
    visible: z.boolean(),
  })
  .refine((ch) => ch.black < ch.white, { message: "The black point must be below the white point.", path: ["white"] });

export const figureClipMarks = z.strictObject({
  /** Colour painted on pixels at the ceiling (and the brightest highPercent % when given). */
  high: hex,
  /** Colour painted on pixels at or below the black point, or the darkest lowPercent % (lowMode "percent"). */
  low: hex,
  lowMode: z.enum(["black", "percent"]).optional(),
  lowPercent: z.number().min(0).max(100).optional(),
  highPercent: z.number().min(0).max(100).optional(),
});

export const figureSidecar = z
  .strictObject({
    format: z.literal(FIGURE_SIDECAR_FORMAT),
    version: z.literal(FIGURE_SIDECAR_VERSION),
    app: z.strictObject({ name: z.literal("Fluxframe"), version: z.string().min(1) }),
    exportedAt: z.iso.datetime(),
    dataset: z.strictObject({
      id: z.number().int().positive(),
      title: z.string(),
      /** SHA-256 of the stored original file, lowercase hex: the figure was made from exactly these bytes. */
      sha256: z.string().regex(/^[0-9a-f]{64}$/, "A SHA-256 is 64 lowercase hex digits."),
      width: z.number().int().min(1),
      height: z.number().int().min(1),
      sizeC: z.number().int().min(1),
      sizeZ: z.number().int().min(1),
      sizeT: z.number().int().min(1),
      /** Highest raw value the detector can produce; the high clipping mark starts here. */
      ceiling: z.number().int().min(1).nullable(),
    }),
    /** 0-based, like OME-XML TheZ/TheT/TheC; `c` lists the channels drawn (visible), in blend order. */
    plane: z.strictObject({ z: count, t: count, c: z.array(count) }),
    channels: z.array(figureChannel).min(1),
    blend: z.enum(["add", "max"]),
    clipMarks: figureClipMarks.nullable(),
    /** A colour-vision simulation applied to the whole composite (Machado et al. 2009), or null. */
    cvdPreview: z.enum(["protanopia", "deuteranopia", "tritanopia"]).nullable(),
    /** Flat/dark correction applied for display (datasets of the same lab), or null. */
    correction: z.strictObject({ flatDatasetId: z.number().int().positive(), darkDatasetId: z.number().int().positive() }).nullable(),
    /** Micrometres per image pixel (x), or null when the file does not say. */
    pixelSizeUm: z.number().positive().nullable(),
    /** Seconds between time points, or null. */
    timeIncrementS: z.number().positive().nullable(),
    output: z.strictObject({
      /** Each image pixel became scale × scale identical PNG pixels (nearest neighbour). */
      scale: z.number().int().min(1).max(16),
      width: z.number().int().min(1),
      height: z.number().int().min(1),
      /** Where the image pixels sit in the PNG; nothing else is drawn inside this rectangle. */
      image: rect,
      background: z.enum(["white", "black"]),
      legend: z.boolean(),
      timeStamp: z.string().nullable(),
      scaleBar: z.strictObject({ um: z.number().positive(), px: z.number().positive() }).nullable(),
    }),
    /** Names of the non-linear or simulated mappings in effect (empty when all mappings are linear). */
    nonLinear: z.array(z.string()),
    /** The line printed on the figure that says it shows a display mapping, not the data. */
    disclosure: z.string().min(1),
  })
  .superRefine((s, ctx) => {
    if (s.plane.z >= s.dataset.sizeZ) ctx.addIssue({ code: "custom", path: ["plane", "z"], message: `z ${s.plane.z} is outside 0…${s.dataset.sizeZ - 1}.` });
    if (s.plane.t >= s.dataset.sizeT) ctx.addIssue({ code: "custom", path: ["plane", "t"], message: `t ${s.plane.t} is outside 0…${s.dataset.sizeT - 1}.` });
    const known = new Set(s.channels.map((ch) => ch.c));
    for (const c of s.plane.c) if (!known.has(c)) ctx.addIssue({ code: "custom", path: ["plane", "c"], message: `Channel ${c} has no mapping.` });
    const { image, width, height, scale } = s.output;
    if (image.x + image.width > width || image.y + image.height > height) ctx.addIssue({ code: "custom", path: ["output", "image"], message: "The image lies outside the figure." });
    if (image.width !== s.dataset.width * scale || image.height !== s.dataset.height * scale) {
      ctx.addIssue({ code: "custom", path: ["output", "image"], message: "The image area must be the plane's size times the scale." });
    }
  });
export type FigureSidecar = z.infer<typeof figureSidecar>;

/** A download name without folders or characters that file systems refuse; the extension is added. */
export const figureFileName = z
  .string()
  .trim()
  .min(1, "Give the file a name.")
  .max(120, "At most 120 characters.")
  .regex(/^[^\\/:*?"<>|\u0000-\u001f]+$/, 'A file name cannot contain \\ / : * ? " < > | or control characters.')
  .refine((s) => !/^\.+$/.test(s), "A file name cannot be only dots.");
