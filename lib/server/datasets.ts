import "server-only";
import { Op, type WhereOptions } from "sequelize";
import type { DatasetOut, ListDatasetsQuery, UpdateDatasetBody } from "@/lib/schemas/dataset";
import type { DetectorSummary } from "@/lib/schemas/detector-profile";
import type { Dataset, DetectorProfile } from "@/models";
import { statColumnsOf } from "@/models/plane";
import { audit } from "./audit";
import { db } from "./db";
import { conflict, HttpError, notFound } from "./errors";
import { enqueueIngest } from "./jobs";
import type { Actor } from "./labs";
import { blobStore } from "./storage";

/** Deleted datasets stay in the bin this long, restorable by editors, before the clean-up removes them. */
export const BIN_DAYS = 7;

/** A detector profile's numbers as a dataset carries them (the bench's photoelectron readout). */
export function detectorSummary(p: DetectorProfile): DetectorSummary {
  return {
    id: p.id,
    name: p.name,
    bitDepth: p.bitDepth,
    offsetDn: p.offsetDn,
    gainDnPerE: p.gainDnPerE,
    readNoiseE: p.readNoiseE ?? null,
    saturationCapacityE: p.saturationCapacityE ?? null,
  };
}

/** Rows loaded with a dataset: the uploader's name and the named detector profile. */
export const datasetIncludes = () => {
  const { User, DetectorProfile } = db();
  return [
    { model: User, as: "uploadedBy" },
    { model: DetectorProfile, as: "detectorProfile" },
  ];
};

export function datasetOut(d: Dataset): DatasetOut {
  return {
    id: d.id,
    labId: d.labId,
    title: d.title,
    originalName: d.originalName,
    status: d.status,
    failureReason: d.failureReason ?? null,
    progress: { done: d.progressDone, total: d.progressTotal },
    sizeBytes: d.sizeBytes,
    sha256: d.sha256,
    width: d.width ?? null,
    height: d.height ?? null,
    bitsPerSample: d.bitsPerSample ?? null,
    compression: d.compression ?? null,
    lossy: Boolean(d.lossy),
    planeCount: d.planeCount ?? null,
    sizeC: d.sizeC ?? null,
    sizeZ: d.sizeZ ?? null,
    sizeT: d.sizeT ?? null,
    dimensionOrder: d.dimensionOrder ?? null,
    dimensionsFrom: d.dimensionsFrom ?? null,
    ceiling: d.ceiling ?? null,
    physicalSizeX: d.physicalSizeX ?? null,
    physicalSizeY: d.physicalSizeY ?? null,
    physicalSizeZ: d.physicalSizeZ ?? null,
    timeIncrement: d.timeIncrement ?? null,
    channels: d.channels ?? null,
    acquisition: d.acquisition ?? null,
    experiment: d.experiment ?? null,
    sample: d.sample ?? null,
    treatment: d.treatment ?? null,
    notes: d.notes ?? null,
    tags: d.tags ?? [],
    detectorProfileId: d.detectorProfileId ?? null,
    detector: d.detectorProfile ? detectorSummary(d.detectorProfile) : null,
    hasThumbnail: Boolean(d.thumbnailKey),
    uploadedBy: d.uploadedBy?.name ?? null,
    deletedAt: d.deletedAt ? d.deletedAt.toISOString() : null,
    purgeAt: d.deletedAt ? new Date(d.deletedAt.getTime() + BIN_DAYS * 86_400_000).toISOString() : null,
    createdAt: d.createdAt.toISOString(),
  };
}

export async function listDatasets(labId: number, query: ListDatasetsQuery) {
  const { Dataset, sequelize } = db();
  const where: WhereOptions = { labId, deletedAt: query.bin === "1" ? { [Op.ne]: null } : null };
  const and: WhereOptions[] = [];
  if (query.q) {
    const like = `%${query.q.replace(/[\\%_]/g, (c) => `\\${c}`)}%`;
    and.push({ [Op.or]: [{ title: { [Op.like]: like } }, { originalName: { [Op.like]: like } }, { experiment: { [Op.like]: like } }, { sample: { [Op.like]: like } }] });
  }
  if (query.status) and.push({ status: query.status });
  if (query.experiment) and.push({ experiment: query.experiment });
  if (query.tag) and.push(sequelize.where(sequelize.fn("JSON_CONTAINS", sequelize.col("tags"), JSON.stringify(query.tag)), 1));
  const { rows, count } = await Dataset.findAndCountAll({
    where: { ...where, ...(and.length ? { [Op.and]: and } : {}) },
    include: datasetIncludes(),
    order: [[query.sort, query.dir.toUpperCase()], ["id", "DESC"]],
    limit: query.pageSize,
    offset: (query.page - 1) * query.pageSize,
  });
  const experiments = (await Dataset.findAll({
    attributes: [[sequelize.fn("DISTINCT", sequelize.col("experiment")), "experiment"]],
    where: { labId, deletedAt: null, experiment: { [Op.ne]: null } },
    raw: true,
  })) as unknown as { experiment: string }[];
  return {
    datasets: rows.map(datasetOut),
    total: count,
    page: query.page,
    pageSize: query.pageSize,
    experiments: experiments.map((e) => e.experiment).sort(),
  };
}

/** A dataset of this lab; deleted ones only when asked (the bin). */
export async function findDataset(labId: number, id: number, options: { deleted?: boolean } = {}): Promise<Dataset> {
  const { Dataset } = db();
  const dataset = await Dataset.findOne({
    where: { id, labId, ...(options.deleted ? {} : { deletedAt: null }) },
    include: datasetIncludes(),
  });
  if (!dataset) throw notFound("That dataset");
  return dataset;
}

export async function updateDataset(actor: Actor, dataset: Dataset, body: UpdateDatasetBody, ip: string | null): Promise<DatasetOut> {
  const { sequelize } = db();
  const changes: Partial<Dataset> = {};
  for (const key of ["title", "experiment", "sample", "treatment", "notes", "tags", "physicalSizeX", "physicalSizeY", "physicalSizeZ", "timeIncrement"] as const) {
    if (body[key] !== undefined) (changes as Record<string, unknown>)[key] = body[key];
  }
  if (body.channels) {
    if (dataset.sizeC && body.channels.length !== dataset.sizeC) {
      throw new HttpError(400, "invalid_input", `This dataset has ${dataset.sizeC} channels; ${body.channels.length} were given.`, { channels: "Wrong number of channels." });
    }
    changes.channels = body.channels;
  }
  let profile: DetectorProfile | null | undefined;
  if (body.detectorProfileId !== undefined) {
    // Only a profile of the dataset's own lab; another lab's id reads as unknown.
    profile = body.detectorProfileId === null ? null : await db().DetectorProfile.findOne({ where: { id: body.detectorProfileId, labId: dataset.labId } });
    if (profile === null && body.detectorProfileId !== null) {
      throw new HttpError(400, "invalid_input", "That detector profile is not one of this lab's.", { detectorProfileId: "Choose one of the lab's detector profiles." });
    }
    changes.detectorProfileId = body.detectorProfileId;
  }
  let reingest = false;
  if (body.dimensions) {
    const { sizeC, sizeZ, sizeT, order } = body.dimensions;
    if (dataset.planeCount && sizeC * sizeZ * sizeT !== dataset.planeCount) {
      throw new HttpError(400, "invalid_input", `C·Z·T = ${sizeC * sizeZ * sizeT}, but the file holds ${dataset.planeCount} planes.`, { dimensions: "C·Z·T must equal the plane count." });
    }
    if (dataset.dimensionsFrom === "ome-xml") throw conflict("This file's dimensions come from its OME-XML and cannot be changed here.");
    if (dataset.status === "ingesting" || dataset.status === "queued") throw conflict("Wait until the current ingest has finished.");
    reingest = sizeC !== dataset.sizeC || sizeZ !== dataset.sizeZ || sizeT !== dataset.sizeT || order !== dataset.dimensionOrder;
    Object.assign(changes, { sizeC, sizeZ, sizeT, dimensionOrder: order });
    if (reingest) {
      changes.status = "queued";
      if (body.channels === undefined) changes.channels = null;
    }
  }
  await sequelize.transaction(async (transaction) => {
    await dataset.update(changes, { transaction });
    if (reingest) await enqueueIngest(dataset.id, transaction);
    await audit({ action: "dataset.edited", labId: dataset.labId, actorId: actor.id, target: String(dataset.id), ip, detail: { fields: Object.keys(changes) } }, transaction);
  });
  // The loaded association still names the old profile.
  if (profile !== undefined) dataset.detectorProfile = profile;
  return datasetOut(dataset);
}

export async function moveToBin(actor: Actor, dataset: Dataset, ip: string | null): Promise<DatasetOut> {
  await dataset.update({ deletedAt: new Date() });
  await audit({ action: "dataset.deleted", labId: dataset.labId, actorId: actor.id, target: `${dataset.id} ${dataset.title}`, ip });
  return datasetOut(dataset);
}

export async function restoreFromBin(actor: Actor, dataset: Dataset, ip: string | null): Promise<DatasetOut> {
  await dataset.update({ deletedAt: null });
  await audit({ action: "dataset.restored", labId: dataset.labId, actorId: actor.id, target: `${dataset.id} ${dataset.title}`, ip });
  return datasetOut(dataset);
}

/** Removes datasets that have been in the bin longer than BIN_DAYS: rows first, then their blobs. */
export async function purgeBin(now = new Date()): Promise<number> {
  const { Dataset } = db();
  const store = blobStore();
  const expired = await Dataset.findAll({ where: { deletedAt: { [Op.lt]: new Date(now.getTime() - BIN_DAYS * 86_400_000) } } });
  for (const dataset of expired) {
    await dataset.destroy();
    await store.delete(dataset.blobKey);
    if (dataset.thumbnailKey) await store.delete(dataset.thumbnailKey);
    await audit({ action: "dataset.purged", labId: dataset.labId, target: `${dataset.id} ${dataset.title}` });
  }
  return expired.length;
}

export async function verifyDataset(actor: Actor, dataset: Dataset, ip: string | null) {
  const actual = await blobStore().sha256(dataset.blobKey);
  const match = actual === dataset.sha256;
  await audit({ action: "dataset.verified", labId: dataset.labId, actorId: actor.id, target: String(dataset.id), ip, detail: { match } });
  return { match, expected: dataset.sha256, actual, checkedAt: new Date().toISOString() };
}

export async function planeIndex(datasetId: number) {
  const { Plane } = db();
  const planes = await Plane.findAll({ where: { datasetId }, order: [["ifdIndex", "ASC"]] });
  return planes.map((p) => ({
    ifdIndex: p.ifdIndex,
    ifdOffset: p.ifdOffset,
    c: p.c,
    z: p.z,
    t: p.t,
    min: p.min,
    max: p.max,
    mean: p.mean,
    sd: p.sd,
    countAtCeiling: p.countAtCeiling,
    countAtZero: p.countAtZero,
    percentiles: p.percentiles,
  }));
}

export async function channelStats(datasetId: number) {
  const { ChannelStat } = db();
  const rows = await ChannelStat.findAll({ where: { datasetId }, order: [["c", "ASC"]] });
  return rows.map((s) => ({ c: s.c, ...statColumnsOf(s) }));
}
