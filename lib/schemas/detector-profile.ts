import { z } from "zod";

// Detector profiles: a lab's cameras as numbers. The gain is stored as EMVA 1288's K in DN per
// electron; camera data sheets often quote the inverse (e⁻ per DN), so input names its unit.

export const GAIN_UNITS = ["dn_per_e", "e_per_dn"] as const;
export const gainUnitLabels: Record<(typeof GAIN_UNITS)[number], string> = { dn_per_e: "DN/e⁻", e_per_dn: "e⁻/DN" };

// zod 4's number() refuses NaN and ±Infinity as well as non-numbers.
const num = (what: string) => z.number({ message: `${what} must be a number.` });

export const detectorProfileName = z.string().trim().min(1, "Name the detector profile.").max(120, "At most 120 characters.");
export const bitDepth = num("Bit depth").int("Bit depth is a whole number of bits.").min(1, "At least 1 bit.").max(16, "Fluxframe reads up to 16 bits.");
export const offsetDn = num("The offset").min(0, "The offset cannot be below 0 DN.").max(65535, "At most 65 535 DN.");

/** A gain as typed: its value and which way round it is written. */
export const gainInput = z.strictObject({
  value: num("The gain").positive("The gain must be above 0.").max(10_000, "At most 10 000."),
  unit: z.enum(GAIN_UNITS, { message: "Say whether the gain is in DN/e⁻ or e⁻/DN." }),
});
export type GainInput = z.infer<typeof gainInput>;

const readNoiseE = num("Read noise").min(0, "Read noise cannot be negative.").max(10_000, "At most 10 000 e⁻.").nullable();
const saturationCapacityE = num("Saturation capacity").positive("Must be above 0.").max(1e9, "At most 10⁹ e⁻.").nullable();
const notes = z.string().trim().max(5000, "At most 5000 characters.").nullable();

/**
 * What a photon-transfer measurement leaves on a profile: the numbers of the fit and the points of
 * the plot, so the curve can be drawn again after the dataset is gone.
 */
export const PhotonTransferSummary = z.strictObject({
  method: z.literal("EMVA 1288 mean–variance (photon transfer)"),
  c: z.number().int().min(0),
  pixelsPerFrame: z.number().int().positive(),
  offsetDn: z.number(),
  darkVarianceDn2: z.number(),
  gainDnPerE: z.number().positive(),
  gainStdErrorDnPerE: z.number().nullable(),
  readNoiseE: z.number().min(0),
  readNoiseIsUpperLimit: z.boolean(),
  saturationCapacityE: z.number().positive(),
  saturationReached: z.boolean(),
  fitFraction: z.number().positive().max(1),
  fitLevels: z.number().int().min(2),
  rSquared: z.number(),
  maxAbsRelativeResidual: z.number().min(0),
  points: z
    .array(z.strictObject({ pages: z.tuple([z.number().int().min(0), z.number().int().min(0)]), signalDn: z.number(), varianceDn2: z.number(), inFit: z.boolean() }))
    .min(3)
    .max(500),
  warnings: z.array(z.string().max(500)).max(20),
  computedAt: z.string().max(40),
});
export type PhotonTransferSummary = z.infer<typeof PhotonTransferSummary>;

const profileFields = {
  name: detectorProfileName,
  bitDepth,
  offsetDn,
  gain: gainInput,
  readNoiseE: readNoiseE.optional(),
  saturationCapacityE: saturationCapacityE.optional(),
  notes: notes.optional(),
};

/** The offset must lie below the ceiling 2^bits − 1, or no signal could be recorded above it. */
const offsetBelowCeiling = (b: { bitDepth?: number; offsetDn?: number }) => b.bitDepth === undefined || b.offsetDn === undefined || b.offsetDn < 2 ** b.bitDepth - 1;
const offsetMessage = { message: "The offset must lie below the ceiling (2^bits − 1).", path: ["offsetDn"] };

export const createDetectorProfileBody = z
  .strictObject({
    ...profileFields,
    source: z.enum(["manual", "measured"]).default("manual"),
    // A measured profile names the dataset of the photon-transfer series and keeps the fit summary.
    sourceDatasetId: z.number().int().positive().nullable().optional(),
    fit: PhotonTransferSummary.nullable().optional(),
  })
  .refine(offsetBelowCeiling, offsetMessage)
  .refine((b) => b.source === "manual" || (b.sourceDatasetId != null && b.fit != null), {
    message: "A measured profile names its dataset and carries the fit.",
    path: ["source"],
  });
export type CreateDetectorProfileBody = z.infer<typeof createDetectorProfileBody>;

/** Any of the fields, with the version the change was based on (a stale one gets 409). */
export const updateDetectorProfileBody = z
  .strictObject({
    version: z.number().int().min(1),
    name: profileFields.name.optional(),
    bitDepth: profileFields.bitDepth.optional(),
    offsetDn: profileFields.offsetDn.optional(),
    gain: profileFields.gain.optional(),
    readNoiseE: profileFields.readNoiseE,
    saturationCapacityE: profileFields.saturationCapacityE,
    notes: profileFields.notes,
  })
  .refine(offsetBelowCeiling, offsetMessage);
export type UpdateDetectorProfileBody = z.infer<typeof updateDetectorProfileBody>;

/** The profile's numbers as a dataset carries them (GET /api/datasets/:id `detector`), for the bench readout. */
export const DetectorSummary = z.object({
  id: z.number(),
  name: z.string(),
  bitDepth: z.number(),
  offsetDn: z.number(),
  gainDnPerE: z.number(),
  readNoiseE: z.number().nullable(),
  saturationCapacityE: z.number().nullable(),
});
export type DetectorSummary = z.infer<typeof DetectorSummary>;

export const DetectorProfileOut = DetectorSummary.extend({
  labId: z.number(),
  /** 2^bitDepth − 1, DN. */
  ceiling: z.number(),
  gainEPerDn: z.number(),
  notes: z.string().nullable(),
  source: z.enum(["manual", "measured"]),
  sourceDatasetId: z.number().nullable(),
  sourceDatasetTitle: z.string().nullable(),
  fit: PhotonTransferSummary.nullable(),
  createdBy: z.string().nullable(),
  /** Datasets of the lab that name this profile. */
  datasetCount: z.number(),
  version: z.number(),
  createdAt: z.string(),
  updatedAt: z.string(),
});
export type DetectorProfileOut = z.infer<typeof DetectorProfileOut>;

/** POST /api/datasets/:id/photon-transfer: which channel's planes form the series (default 0). */
export const photonTransferBody = z.strictObject({ c: z.number().int().min(0).max(63).optional() });
export type PhotonTransferBody = z.infer<typeof photonTransferBody>;

const level = z.object({
  index: z.number(),
  pages: z.tuple([z.number(), z.number()]),
  meanDn: z.number(),
  signalDn: z.number(),
  varianceDn2: z.number(),
  pairDifferenceDn: z.number(),
  inFit: z.boolean(),
  residualDn2: z.number(),
  relativeResidual: z.number(),
});

/** The fit as the endpoint returns it (lib/imaging/photon-transfer.ts PhotonTransferFit), nothing saved. */
export const PhotonTransferOut = z.object({
  datasetId: z.number(),
  datasetTitle: z.string(),
  c: z.number(),
  frames: z.number(),
  fit: z.object({
    dark: z.object({ pages: z.tuple([z.number(), z.number()]), meanDn: z.number(), varianceDn2: z.number(), pairDifferenceDn: z.number() }),
    levels: z.array(level),
    pixelsPerFrame: z.number(),
    gainDnPerE: z.number(),
    gainEPerDn: z.number(),
    gainStdErrorDnPerE: z.number().nullable(),
    offsetDn: z.number(),
    darkNoiseDn: z.number(),
    readNoiseE: z.number(),
    readNoiseIsUpperLimit: z.boolean(),
    saturation: z.object({ level: z.number(), meanDn: z.number(), signalDn: z.number(), capacityE: z.number(), reached: z.boolean() }),
    maxSnr: z.number(),
    fit: z.object({ fraction: z.number(), maxSignalDn: z.number(), levels: z.number(), rSquared: z.number(), maxAbsRelativeResidual: z.number() }),
    warnings: z.array(z.string()),
  }),
  /** What "Save as profile" sends as `fit`. */
  summary: PhotonTransferSummary,
  /** Starting values for the profile form: the fit's numbers and the dataset's bit depth. */
  suggested: z.object({ name: z.string(), bitDepth: z.number().nullable(), offsetDn: z.number(), gainDnPerE: z.number(), readNoiseE: z.number(), saturationCapacityE: z.number() }),
});
export type PhotonTransferOut = z.infer<typeof PhotonTransferOut>;
