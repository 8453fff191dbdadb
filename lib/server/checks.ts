import "server-only";
import { checkDataset, DEFAULT_THRESHOLDS, type CheckThresholds, type DetectorInfo } from "@/lib/imaging/acquisition-check";
import { checkThresholdsBody, type CheckThresholdsBody } from "@/lib/schemas/checks";
import type { Dataset, Lab } from "@/models";
import { audit } from "./audit";
import { db } from "./db";

/** The lab's limits, or the defaults when none were set (or the stored ones no longer validate). */
export function thresholdsOf(lab: Lab): CheckThresholds {
  const parsed = checkThresholdsBody.safeParse(lab.checkThresholds);
  return parsed.success ? parsed.data : DEFAULT_THRESHOLDS;
}

export async function saveThresholds(lab: Lab, actorId: number, body: CheckThresholdsBody, ip: string | null): Promise<CheckThresholds> {
  await db().sequelize.transaction(async (transaction) => {
    await lab.update({ checkThresholds: body }, { transaction });
    await audit({ action: "lab.check_thresholds_changed", labId: lab.id, actorId, target: `lab:${lab.id}`, ip, detail: body }, transaction);
  });
  return thresholdsOf(lab);
}

/** The dataset's detector profile as the check needs it, when the dataset names one. */
async function detectorOf(dataset: Dataset): Promise<DetectorInfo | null> {
  if (!dataset.detectorProfileId) return null;
  const row = await db().DetectorProfile.findByPk(dataset.detectorProfileId);
  if (!row) return null;
  return { name: row.name, bitDepth: row.bitDepth, offsetDn: row.offsetDn, gainDnPerE: row.gainDnPerE, readNoiseE: row.readNoiseE ?? null };
}

/**
 * The acquisition check of one dataset, computed from the statistics stored at ingest (per channel
 * and per plane) with the lab's limits and the dataset's detector profile. Computed on every read:
 * a change of metadata, profile or limits shows at once.
 */
export async function datasetCheck(dataset: Dataset, thresholds: CheckThresholds) {
  if (dataset.status !== "ready") return null;
  const [planes, stats, detector] = await Promise.all([
    db().Plane.findAll({ where: { datasetId: dataset.id }, attributes: ["c", "z", "t", "countAtCeiling", "countAtZero"] }),
    db().ChannelStat.findAll({ where: { datasetId: dataset.id }, order: [["c", "ASC"]] }),
    detectorOf(dataset),
  ]);
  const planePixels = (dataset.width ?? 0) * (dataset.height ?? 0);
  const leftJustified = ((dataset.acquisition ?? {}) as { leftJustifiedBits?: (number | null)[] }).leftJustifiedBits ?? [];
  const result = checkDataset({
    storedCeiling: dataset.ceiling ?? 65535,
    significantBits: dataset.significantBits ?? null,
    containerBits: dataset.bitsPerSample ?? 16,
    detector,
    thresholds,
    channels: stats.map((s) => {
      const own = planes.filter((p) => p.c === s.c);
      return {
        c: s.c,
        name: dataset.channels?.[s.c]?.name ?? `Channel ${s.c + 1}`,
        pixels: planePixels * own.length,
        max: s.max ?? 0,
        countAtCeiling: Number(s.countAtCeiling ?? 0),
        countAtZero: Number(s.countAtZero ?? 0),
        percentiles: s.percentiles ?? {},
        leftJustifiedBits: leftJustified[s.c] ?? null,
        planes: own.map((p) => ({ z: p.z, t: p.t, pixels: planePixels, countAtCeiling: Number(p.countAtCeiling ?? 0) })),
      };
    }),
  });
  return { ...result, detector, thresholds };
}

/** Per plane and channel: the saturated fraction, for the report's plots over t and z. */
export async function saturationSeries(dataset: Dataset) {
  const planes = await db().Plane.findAll({ where: { datasetId: dataset.id }, attributes: ["c", "z", "t", "countAtCeiling", "countAtZero"], order: [["c", "ASC"], ["t", "ASC"], ["z", "ASC"]] });
  const pixels = (dataset.width ?? 0) * (dataset.height ?? 0) || 1;
  return planes.map((p) => ({ c: p.c, z: p.z, t: p.t, saturated: Number(p.countAtCeiling ?? 0) / pixels, zero: Number(p.countAtZero ?? 0) / pixels }));
}

/** Every ready dataset of the lab with its verdicts (the Checks page). */
export async function labChecks(lab: Lab) {
  const thresholds = thresholdsOf(lab);
  const datasets = await db().Dataset.findAll({ where: { labId: lab.id, status: "ready", deletedAt: null }, order: [["createdAt", "DESC"]] });
  const rows = [];
  for (const dataset of datasets) {
    const check = await datasetCheck(dataset, thresholds);
    if (!check) continue;
    rows.push({
      datasetId: dataset.id,
      title: dataset.title,
      lossy: Boolean(dataset.lossy),
      createdAt: dataset.createdAt.toISOString(),
      verdict: check.verdict,
      channels: check.channels.map((ch) => ({
        c: ch.c,
        name: ch.name,
        verdict: ch.verdict,
        saturatedFraction: ch.saturated.fraction,
        zeroFraction: ch.zero.fraction,
        rangeUse: ch.rangeUse,
        headroom: Number.isFinite(ch.headroom) ? ch.headroom : null,
        reasons: ch.reasons,
      })),
    });
  }
  return { thresholds, datasets: rows };
}
