import { z } from "zod";
import { hexColour } from "./preset";

// Regions of interest saved per dataset (bench, "Regions"). Geometry is in image pixel coordinates
// (x right, y down; pixel (i, j) covers [i, i+1) × [j, j+1)); lib/imaging/regions.ts rasterises it.

/** Generous bounds: a region may reach outside the image, but not absurdly far. */
const coord = z.number({ message: "Give a number (image pixels)." }).finite("Give a finite number.").min(-1e6, "Too far outside the image.").max(1e6, "Too far outside the image.");
const size = z.number({ message: "Give a number (image pixels)." }).finite("Give a finite number.").gt(0, "Must be more than 0 pixels.").max(1e6, "Too large.");

export const rectGeometry = z.strictObject({ x: coord, y: coord, width: size, height: size });
export const ellipseGeometry = z.strictObject({ cx: coord, cy: coord, rx: size, ry: size });
export const polygonGeometry = z.strictObject({
  points: z
    .array(z.tuple([coord, coord], { message: "Each point is [x, y]." }), { message: "List the corners as [x, y] pairs." })
    .min(3, "A polygon needs at least 3 corners.")
    .max(1000, "At most 1000 corners."),
});
export const lineGeometry = z
  .strictObject({ x1: coord, y1: coord, x2: coord, y2: coord })
  .refine((g) => g.x1 !== g.x2 || g.y1 !== g.y2, { message: "A line needs two different ends.", path: ["x2"] });

export const regionKinds = ["rect", "ellipse", "polygon", "line"] as const;
export type RegionKindName = (typeof regionKinds)[number];

export const geometryOf = { rect: rectGeometry, ellipse: ellipseGeometry, polygon: polygonGeometry, line: lineGeometry } as const;

const regionName = z.string({ message: "Give the region a name." }).trim().min(1, "Give the region a name.").max(120, "At most 120 characters.");

const common = { name: regionName, colour: hexColour.optional() };

export const createRegionBody = z.discriminatedUnion(
  "kind",
  [
    z.strictObject({ kind: z.literal("rect"), geometry: rectGeometry, ...common }),
    z.strictObject({ kind: z.literal("ellipse"), geometry: ellipseGeometry, ...common }),
    z.strictObject({ kind: z.literal("polygon"), geometry: polygonGeometry, ...common }),
    z.strictObject({ kind: z.literal("line"), geometry: lineGeometry, ...common }),
  ],
  { message: "Choose a region kind: rect, ellipse, polygon or line." },
);
export type CreateRegionBody = z.infer<typeof createRegionBody>;

/** Rename, recolour or reshape (the kind stays). `version` is the one the change was based on. */
export const updateRegionBody = z
  .strictObject({
    version: z.number({ message: "Send the version you changed." }).int().positive(),
    name: regionName.optional(),
    colour: hexColour.optional(),
    /** Checked against the region's kind by the server. */
    geometry: z.record(z.string(), z.unknown(), { message: "Geometry is an object." }).optional(),
  })
  .refine((b) => b.name !== undefined || b.colour !== undefined || b.geometry !== undefined, { message: "Change the name, colour or geometry.", path: ["name"] });
export type UpdateRegionBody = z.infer<typeof updateRegionBody>;

export type RegionGeometry = z.infer<typeof rectGeometry> | z.infer<typeof ellipseGeometry> | z.infer<typeof polygonGeometry> | z.infer<typeof lineGeometry>;

export const RegionOut = z.object({
  id: z.number(),
  datasetId: z.number(),
  name: z.string(),
  kind: z.enum(regionKinds),
  geometry: z.record(z.string(), z.unknown()),
  colour: z.string(),
  createdBy: z.string().nullable(),
  version: z.number(),
  createdAt: z.string(),
  updatedAt: z.string(),
});
export type RegionOut = z.infer<typeof RegionOut>;

/** Default outline colour: yellow reads on every colour table's dark end and differs from the clip marks' defaults. */
export const DEFAULT_REGION_COLOUR = "#ffd23f";
