import { z } from "zod";
import { DIMENSION_ORDERS } from "@/lib/tiff/ome";
import { DetectorSummary } from "./detector-profile";

export const MiB = 1024 * 1024;
export const DEFAULT_PART_SIZE = 8 * MiB;
/** Default upload limit (50 GiB); the server reads MAX_UPLOAD_BYTES. */
export const DEFAULT_MAX_UPLOAD_BYTES = 50 * 1024 * MiB;

const count = (what: string) => z.number({ message: `${what} must be a number.` }).int(`${what} must be a whole number.`).min(1, `${what} must be at least 1.`).max(100_000);
const micrometres = z.number().positive("Must be above 0.").max(10_000, "At most 10 000 µm.").nullable().optional();

/** Dimensions typed by the uploader for a file without OME-XML; C·Z·T must equal the plane count. */
export const dimensionsBody = z.object({
  sizeC: count("Channels"),
  sizeZ: count("Z-slices"),
  sizeT: count("Time points"),
  order: z.enum(DIMENSION_ORDERS, { message: "Choose a dimension order." }),
  physicalSizeXY: micrometres,
  physicalSizeZ: micrometres,
  timeIncrement: z.number().positive("Must be above 0.").max(1e7).nullable().optional(),
});
export type DimensionsBody = z.infer<typeof dimensionsBody>;

export const createUploadBody = z.object({
  fileName: z.string().trim().min(1, "The file needs a name.").max(255, "File names are limited to 255 characters."),
  sizeBytes: z.number().int().min(8, "A TIFF file has at least 8 bytes."),
  // Browsers use DEFAULT_PART_SIZE; small parts are allowed so tests can cross part boundaries cheaply.
  partSize: z.number().int().min(1024).max(64 * MiB).optional(),
  title: z.string().trim().min(1).max(200).optional(),
  dimensions: dimensionsBody.optional(),
});
export type CreateUploadBody = z.infer<typeof createUploadBody>;

export const sha256Hex = z.string().regex(/^[0-9a-f]{64}$/, "A SHA-256 is 64 lower-case hex digits.");
export const completeUploadBody = z.object({ sha256: sha256Hex });

export const UploadOut = z.object({
  id: z.string(),
  fileName: z.string(),
  sizeBytes: z.number(),
  partSize: z.number(),
  partCount: z.number(),
  receivedParts: z.array(z.number()),
  status: z.enum(["open", "completing", "completed", "failed", "cancelled"]),
  failureReason: z.string().nullable(),
  datasetId: z.number().nullable(),
});
export type UploadOut = z.infer<typeof UploadOut>;

const channel = z.object({
  name: z.string().trim().min(1, "Name the channel.").max(80),
  colour: z.string().regex(/^#[0-9a-fA-F]{6}$/, "Use a colour like #22cc88."),
  emissionNm: z.number().min(200).max(2000).nullable(),
});

const text = (max: number) => z.string().trim().max(max, `At most ${max} characters.`).nullable().optional();

export const updateDatasetBody = z.object({
  title: z.string().trim().min(1, "Give the dataset a title.").max(200).optional(),
  experiment: text(200),
  sample: text(200),
  treatment: text(200),
  notes: text(5000),
  tags: z.array(z.string().trim().min(1).max(40)).max(30).optional(),
  channels: z.array(channel).max(64).optional(),
  physicalSizeX: micrometres,
  physicalSizeY: micrometres,
  physicalSizeZ: micrometres,
  timeIncrement: z.number().positive().max(1e7).nullable().optional(),
  dimensions: dimensionsBody.pick({ sizeC: true, sizeZ: true, sizeT: true, order: true }).optional(),
  // The lab's detector profile the dataset was taken with (Detectors page); null clears it.
  detectorProfileId: z.number({ message: "Choose a detector profile." }).int().positive().nullable().optional(),
});
export type UpdateDatasetBody = z.infer<typeof updateDatasetBody>;

export const datasetSortKeys = ["createdAt", "title", "sizeBytes", "status"] as const;

export const listDatasetsQuery = z.object({
  q: z.string().trim().max(200).optional(),
  status: z.enum(["queued", "ingesting", "ready", "failed"]).optional(),
  experiment: z.string().trim().max(200).optional(),
  tag: z.string().trim().max(40).optional(),
  bin: z.enum(["0", "1"]).default("0"),
  sort: z.enum(datasetSortKeys).default("createdAt"),
  dir: z.enum(["asc", "desc"]).default("desc"),
  page: z.coerce.number().int().min(1).max(100_000).default(1),
  pageSize: z.coerce.number().int().min(1).max(100).default(25),
});
export type ListDatasetsQuery = z.infer<typeof listDatasetsQuery>;

export const DatasetOut = z.object({
  id: z.number(),
  labId: z.number(),
  title: z.string(),
  originalName: z.string(),
  status: z.enum(["queued", "ingesting", "ready", "failed"]),
  failureReason: z.string().nullable(),
  progress: z.object({ done: z.number(), total: z.number() }),
  sizeBytes: z.number(),
  sha256: z.string(),
  width: z.number().nullable(),
  height: z.number().nullable(),
  bitsPerSample: z.number().nullable(),
  compression: z.string().nullable(),
  lossy: z.boolean(),
  planeCount: z.number().nullable(),
  sizeC: z.number().nullable(),
  sizeZ: z.number().nullable(),
  sizeT: z.number().nullable(),
  dimensionOrder: z.string().nullable(),
  dimensionsFrom: z.string().nullable(),
  ceiling: z.number().nullable(),
  physicalSizeX: z.number().nullable(),
  physicalSizeY: z.number().nullable(),
  physicalSizeZ: z.number().nullable(),
  timeIncrement: z.number().nullable(),
  channels: z.array(channel).nullable(),
  acquisition: z.record(z.string(), z.unknown()).nullable(),
  experiment: z.string().nullable(),
  sample: z.string().nullable(),
  treatment: z.string().nullable(),
  notes: z.string().nullable(),
  tags: z.array(z.string()),
  detectorProfileId: z.number().nullable(),
  /** The named profile's numbers, so the bench can show photoelectrons without another request. */
  detector: DetectorSummary.nullable(),
  hasThumbnail: z.boolean(),
  uploadedBy: z.string().nullable(),
  deletedAt: z.string().nullable(),
  purgeAt: z.string().nullable(),
  createdAt: z.string(),
});
export type DatasetOut = z.infer<typeof DatasetOut>;
