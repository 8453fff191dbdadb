import "server-only";
import { inflateSync } from "node:zlib";
import { Op, type Transaction } from "sequelize";
import { fitPhotonTransfer, gainToDnPerE, pairStats, PhotonTransferError, seriesPairs, type PhotonTransferFit } from "@/lib/imaging/photon-transfer";
import type { Role } from "@/lib/permissions";
import {
  DetectorProfileOut,
  PhotonTransferSummary,
  type CreateDetectorProfileBody,
  type PhotonTransferBody,
  type PhotonTransferOut,
  type UpdateDetectorProfileBody,
} from "@/lib/schemas/detector-profile";
import { idParam } from "@/lib/schemas/lab";
import { decodePlane } from "@/lib/tiff/decode";
import { readTiffHeader } from "@/lib/tiff/structure";
import type { Dataset, DetectorProfile } from "@/models";
import { audit } from "./audit";
import { blobByteSource } from "./blob-source";
import { db } from "./db";
import { conflict, HttpError, notFound, uniqueName } from "./errors";
import { blobStore } from "./storage";

const PROFILE_NAME_TAKEN = "A detector profile with that name already exists in this lab.";

// Detector profiles of a lab. Every member reads them (lab.read); editors and owners create, change
// and delete them (detectors.edit, checked by the route wrapper). The gain is stored as K in DN per
// electron (EMVA 1288); input may give e⁻ per DN and is converted here.

export interface Caller {
  userId: number;
  role: Role;
  labId: number;
}

/** The route's profile id; anything but a plain positive integer is a 404, like an unknown id. */
export function detectorProfileId(raw: unknown): number {
  const id = idParam.safeParse(raw);
  if (!id.success) throw notFound("That detector profile");
  return id.data;
}

async function findProfile(labId: number, id: number, transaction?: Transaction): Promise<DetectorProfile> {
  const { DetectorProfile, User } = db();
  const profile = await DetectorProfile.findOne({ where: { id, labId }, include: [{ model: User, as: "createdBy", attributes: ["id", "name"] }], transaction });
  if (!profile) throw notFound("That detector profile");
  return profile;
}

/** Titles of the source datasets and how many datasets name each profile (datasets in the bin are not counted). */
async function extras(labId: number, profiles: DetectorProfile[], transaction?: Transaction) {
  const { Dataset, sequelize } = db();
  const sourceIds = [...new Set(profiles.map((p) => p.sourceDatasetId).filter((id): id is number => id !== null))];
  const sources = sourceIds.length ? await Dataset.findAll({ where: { id: sourceIds, labId }, attributes: ["id", "title"], transaction }) : [];
  const counts = (await Dataset.findAll({
    attributes: ["detectorProfileId", [sequelize.fn("COUNT", sequelize.col("id")), "n"]],
    where: { labId, deletedAt: null, detectorProfileId: { [Op.in]: profiles.map((p) => p.id) } },
    group: ["detectorProfileId"],
    raw: true,
    transaction,
  })) as unknown as { detectorProfileId: number; n: number | string }[];
  return {
    title: new Map(sources.map((d) => [d.id, d.title])),
    count: new Map(counts.map((c) => [Number(c.detectorProfileId), Number(c.n)])),
  };
}

function profileOut(p: DetectorProfile, x: Awaited<ReturnType<typeof extras>>): DetectorProfileOut {
  const fit = p.fit == null ? null : PhotonTransferSummary.safeParse(p.fit);
  const result = DetectorProfileOut.safeParse({
    id: p.id,
    labId: p.labId,
    name: p.name,
    bitDepth: p.bitDepth,
    ceiling: 2 ** p.bitDepth - 1,
    offsetDn: p.offsetDn,
    gainDnPerE: p.gainDnPerE,
    gainEPerDn: 1 / p.gainDnPerE,
    readNoiseE: p.readNoiseE ?? null,
    saturationCapacityE: p.saturationCapacityE ?? null,
    notes: p.notes ?? null,
    source: p.source,
    sourceDatasetId: p.sourceDatasetId ?? null,
    sourceDatasetTitle: p.sourceDatasetId ? (x.title.get(p.sourceDatasetId) ?? null) : null,
    // A stored summary that no longer fits the schema is left out rather than failing the list.
    fit: fit?.success ? fit.data : null,
    createdBy: p.createdBy?.name ?? null,
    datasetCount: x.count.get(p.id) ?? 0,
    version: p.version,
    createdAt: p.createdAt.toISOString(),
    updatedAt: p.updatedAt.toISOString(),
  });
  // A stored row that no longer fits the schema is a server fault (500), not the caller's input.
  if (!result.success) throw new Error(`Detector profile ${p.id} does not match its output schema: ${result.error.message}`);
  return result.data;
}

export async function listDetectorProfiles(labId: number): Promise<DetectorProfileOut[]> {
  const { DetectorProfile, User } = db();
  const rows = await DetectorProfile.findAll({ where: { labId }, include: [{ model: User, as: "createdBy", attributes: ["id", "name"] }], order: [["name", "ASC"], ["id", "ASC"]] });
  const x = await extras(labId, rows);
  return rows.map((row) => profileOut(row, x));
}

export async function getDetectorProfile(labId: number, id: number, transaction?: Transaction): Promise<DetectorProfileOut> {
  const profile = await findProfile(labId, id, transaction);
  return profileOut(profile, await extras(labId, [profile], transaction));
}

export async function createDetectorProfile(caller: Caller, body: CreateDetectorProfileBody, ip: string | null): Promise<DetectorProfileOut> {
  const { Dataset, DetectorProfile, sequelize } = db();
  return sequelize.transaction(async (transaction) => {
    if (body.sourceDatasetId != null) {
      const source = await Dataset.findOne({ where: { id: body.sourceDatasetId, labId: caller.labId }, attributes: ["id"], transaction });
      if (!source) throw new HttpError(400, "invalid_input", "The measured dataset is not one of this lab's.", { sourceDatasetId: "Choose one of the lab's datasets." });
    }
    const measured = body.source === "measured";
    const row = await uniqueName(PROFILE_NAME_TAKEN, () =>
      DetectorProfile.create(
        {
          labId: caller.labId,
          name: body.name,
          bitDepth: body.bitDepth,
          offsetDn: body.offsetDn,
          gainDnPerE: gainToDnPerE(body.gain.value, body.gain.unit),
          readNoiseE: body.readNoiseE ?? null,
          saturationCapacityE: body.saturationCapacityE ?? null,
          notes: body.notes || null,
          source: body.source,
          sourceDatasetId: measured ? (body.sourceDatasetId ?? null) : null,
          fit: measured ? (body.fit ?? null) : null,
          createdById: caller.userId,
        },
        { transaction },
      ),
    );
    await audit(
      {
        action: "detector_profile.created",
        labId: caller.labId,
        actorId: caller.userId,
        target: `detector-profile:${row.id}`,
        ip,
        detail: { name: row.name, source: row.source, gainDnPerE: row.gainDnPerE, gainEnteredAs: body.gain.unit, sourceDatasetId: row.sourceDatasetId },
      },
      transaction,
    );
    return getDetectorProfile(caller.labId, row.id, transaction);
  });
}

export type UpdateOutcome = { ok: true; profile: DetectorProfileOut } | { ok: false; current: DetectorProfileOut };

/**
 * Saves only when the caller names the current version (one UPDATE … WHERE id = ? AND version = ?,
 * so of two concurrent saves of the same version one wins). Changing a measured profile's numbers
 * makes it "manual": the numbers are then no longer the fit's; the fit summary stays for reference.
 */
export async function updateDetectorProfile(caller: Caller, id: number, body: UpdateDetectorProfileBody): Promise<UpdateOutcome> {
  const { DetectorProfile, sequelize } = db();
  return sequelize.transaction(async (transaction) => {
    const profile = await findProfile(caller.labId, id, transaction);
    const changes: Partial<Pick<DetectorProfile, "name" | "bitDepth" | "offsetDn" | "gainDnPerE" | "readNoiseE" | "saturationCapacityE" | "notes" | "source">> = {};
    if (body.name !== undefined) changes.name = body.name;
    if (body.bitDepth !== undefined) changes.bitDepth = body.bitDepth;
    if (body.offsetDn !== undefined) changes.offsetDn = body.offsetDn;
    if (body.gain !== undefined) changes.gainDnPerE = gainToDnPerE(body.gain.value, body.gain.unit);
    if (body.readNoiseE !== undefined) changes.readNoiseE = body.readNoiseE;
    if (body.saturationCapacityE !== undefined) changes.saturationCapacityE = body.saturationCapacityE;
    if (body.notes !== undefined) changes.notes = body.notes || null;
    const bits = changes.bitDepth ?? profile.bitDepth;
    const offset = changes.offsetDn ?? profile.offsetDn;
    if (offset >= 2 ** bits - 1) throw new HttpError(400, "invalid_input", "Some fields are not valid.", { offsetDn: "The offset must lie below the ceiling (2^bits − 1)." });
    const numbers = ["offsetDn", "gainDnPerE", "readNoiseE", "saturationCapacityE"] as const;
    // A tiny relative tolerance: a gain typed as e⁻/DN comes back through 1/x.
    const moved = numbers.some((k) => changes[k] !== undefined && !same(changes[k] ?? null, profile[k] ?? null));
    if (profile.source === "measured" && moved) changes.source = "manual";
    const [affected] = await uniqueName(PROFILE_NAME_TAKEN, () =>
      DetectorProfile.update({ ...changes, version: sequelize.literal("version + 1") as unknown as number }, { where: { id: profile.id, labId: caller.labId, version: body.version }, transaction }),
    );
    const current = await getDetectorProfile(caller.labId, profile.id, transaction);
    return affected === 1 ? { ok: true, profile: current } : { ok: false, current };
  });
}

function same(a: number | null, b: number | null): boolean {
  if (a === null || b === null) return a === b;
  return Math.abs(a - b) <= 1e-12 * Math.max(Math.abs(a), Math.abs(b));
}

/** Deletes the profile; datasets that named it are left without one (the foreign key sets null). */
export async function deleteDetectorProfile(caller: Caller, id: number, ip: string | null): Promise<void> {
  const { sequelize } = db();
  await sequelize.transaction(async (transaction) => {
    const profile = await findProfile(caller.labId, id, transaction);
    await profile.destroy({ transaction });
    await audit(
      { action: "detector_profile.deleted", labId: caller.labId, actorId: caller.userId, target: `detector-profile:${profile.id}`, ip, detail: { name: profile.name, source: profile.source } },
      transaction,
    );
  });
}

/** Longest series read (frames): 500 pairs is far more than EMVA 1288's 50 levels. */
export const MAX_SERIES_FRAMES = 1000;

const layoutError = (message: string) => new HttpError(400, "invalid_input", message, { series: message });

/**
 * The photon-transfer fit of a dataset laid out as a dark pair followed by flat pairs: the planes of
 * channel `c` in file order. Reads two planes at a time from the stored original (by byte ranges);
 * nothing is saved. A series that does not have this layout is a 400 saying what is wrong.
 */
export async function photonTransferOf(dataset: Dataset, body: PhotonTransferBody): Promise<PhotonTransferOut> {
  const c = body.c ?? 0;
  if (dataset.status !== "ready") throw conflict("This dataset is not ready yet; wait until its planes have been read.");
  if (dataset.lossy) throw layoutError("This file uses lossy compression, which alters the noise: photon transfer needs raw counts.");
  if (dataset.sampleFormat === 3) throw layoutError("This file holds floating-point values; photon transfer needs the camera's integer counts.");
  const planes = await db().Plane.findAll({ where: { datasetId: dataset.id, c }, attributes: ["ifdIndex", "ifdOffset"], order: [["ifdIndex", "ASC"]] });
  if (!planes.length) throw layoutError(`This dataset has no channel ${c + 1}.`);
  if (planes.length > MAX_SERIES_FRAMES) throw layoutError(`A photon-transfer series has at most ${MAX_SERIES_FRAMES} frames; this channel has ${planes.length}.`);

  let fit: PhotonTransferFit;
  try {
    const pairs = seriesPairs(planes.length);
    const source = blobByteSource(blobStore(), dataset.blobKey, dataset.sizeBytes);
    const header = await readTiffHeader(source);
    const read = async (k: number) => {
      const plane = await decodePlane(source, Number(planes[k].ifdOffset), { header, inflate: (block) => inflateSync(block) });
      return plane.data;
    };
    // Two planes in memory at a time, whatever the length of the series.
    const stats = [];
    for (const [p, q] of pairs) stats.push(pairStats(await read(p), await read(q)));
    fit = fitPhotonTransfer(
      stats,
      pairs.map(([p, q]) => [planes[p].ifdIndex, planes[q].ifdIndex]),
    );
  } catch (error) {
    if (error instanceof PhotonTransferError) throw layoutError(error.message);
    if (error instanceof RangeError) throw layoutError(`The frames cannot be compared: ${error.message}.`);
    throw error;
  }

  const ceiling = dataset.ceiling ?? null;
  const bits = dataset.significantBits ?? (ceiling !== null && Number.isInteger(Math.log2(ceiling + 1)) ? Math.log2(ceiling + 1) : null);
  const summary: PhotonTransferSummary = {
    method: "EMVA 1288 mean–variance (photon transfer)",
    c,
    pixelsPerFrame: fit.pixelsPerFrame,
    offsetDn: fit.offsetDn,
    darkVarianceDn2: fit.dark.varianceDn2,
    gainDnPerE: fit.gainDnPerE,
    gainStdErrorDnPerE: fit.gainStdErrorDnPerE,
    readNoiseE: fit.readNoiseE,
    readNoiseIsUpperLimit: fit.readNoiseIsUpperLimit,
    saturationCapacityE: fit.saturation.capacityE,
    saturationReached: fit.saturation.reached,
    fitFraction: fit.fit.fraction,
    fitLevels: fit.fit.levels,
    rSquared: fit.fit.rSquared,
    maxAbsRelativeResidual: fit.fit.maxAbsRelativeResidual,
    points: fit.levels.map((l) => ({ pages: l.pages, signalDn: l.signalDn, varianceDn2: l.varianceDn2, inFit: l.inFit })),
    warnings: fit.warnings,
    computedAt: new Date().toISOString(),
  };
  return {
    datasetId: dataset.id,
    datasetTitle: dataset.title,
    c,
    frames: planes.length,
    fit,
    summary,
    suggested: {
      name: `Measured from ${dataset.title}`.slice(0, 120),
      bitDepth: bits !== null && bits >= 1 && bits <= 16 ? bits : null,
      offsetDn: fit.offsetDn,
      gainDnPerE: fit.gainDnPerE,
      readNoiseE: fit.readNoiseE,
      saturationCapacityE: fit.saturation.capacityE,
    },
  };
}
