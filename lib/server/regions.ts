import "server-only";
import { geometryOf, DEFAULT_REGION_COLOUR, type CreateRegionBody, type RegionOut, type UpdateRegionBody } from "@/lib/schemas/region";
import type { Dataset, Region } from "@/models";
import { db } from "./db";
import { fieldErrors, HttpError, notFound } from "./errors";

// Regions of interest per dataset: the lab reads them, editors and owners draw, change and delete
// them (datasets.edit, checked by the route wrapper). Every query is scoped by the dataset, which the
// wrapper has already scoped by the caller's lab.

type RegionRow = Region & { createdBy?: { name: string } | null };

function regionOut(r: RegionRow): RegionOut {
  return {
    id: r.id,
    datasetId: r.datasetId,
    name: r.name,
    kind: r.kind,
    geometry: r.geometry as Record<string, unknown>,
    colour: r.colour,
    createdBy: r.createdBy?.name ?? null,
    version: r.version,
    createdAt: r.createdAt.toISOString(),
    updatedAt: r.updatedAt.toISOString(),
  };
}

const withCreator = [{ association: "createdBy", attributes: ["name"] }];

export async function listRegions(dataset: Dataset): Promise<RegionOut[]> {
  const rows = await db().Region.findAll({ where: { datasetId: dataset.id }, include: withCreator, order: [["id", "ASC"]] });
  return rows.map((r) => regionOut(r as RegionRow));
}

export async function createRegion(user: { id: number; name: string }, dataset: Dataset, body: CreateRegionBody): Promise<RegionOut> {
  const row = await db().Region.create({
    datasetId: dataset.id,
    createdById: user.id,
    name: body.name,
    kind: body.kind,
    geometry: body.geometry,
    colour: (body.colour ?? DEFAULT_REGION_COLOUR).toLowerCase(),
  });
  return regionOut(Object.assign(row, { createdBy: { name: user.name } }));
}

async function findRegion(dataset: Dataset, regionId: number): Promise<RegionRow> {
  const row = await db().Region.findOne({ where: { id: regionId, datasetId: dataset.id }, include: withCreator });
  if (!row) throw notFound("That region");
  return row as RegionRow;
}

export type RegionUpdate = { ok: true; region: RegionOut } | { ok: false; current: RegionOut };

/**
 * Changes name, colour or geometry (validated against the region's kind) only when the caller names
 * the current version: UPDATE … WHERE id = ? AND version = ?, so of two saves of one version one wins.
 */
export async function updateRegion(dataset: Dataset, regionId: number, body: UpdateRegionBody): Promise<RegionUpdate> {
  const { Region: Regions, sequelize } = db();
  const region = await findRegion(dataset, regionId);
  let geometry: unknown;
  if (body.geometry !== undefined) {
    const parsed = geometryOf[region.kind].safeParse(body.geometry);
    if (!parsed.success) {
      const fields = Object.fromEntries(Object.entries(fieldErrors(parsed.error)).map(([k, v]) => [k === "_" ? "geometry" : `geometry.${k}`, v]));
      throw new HttpError(400, "invalid_input", `That geometry does not describe a ${region.kind}.`, fields);
    }
    geometry = parsed.data;
  }
  const changes = {
    ...(body.name !== undefined ? { name: body.name } : {}),
    ...(body.colour !== undefined ? { colour: body.colour.toLowerCase() } : {}),
    ...(geometry !== undefined ? { geometry } : {}),
  };
  const [affected] = await Regions.update(
    { ...changes, version: sequelize.literal("version + 1") as unknown as number },
    { where: { id: region.id, datasetId: dataset.id, version: body.version } },
  );
  const current = await findRegion(dataset, regionId);
  return affected === 1 ? { ok: true, region: regionOut(current) } : { ok: false, current: regionOut(current) };
}

export async function deleteRegion(dataset: Dataset, regionId: number): Promise<void> {
  const region = await findRegion(dataset, regionId);
  await region.destroy();
}
