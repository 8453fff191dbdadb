import "server-only";
import { Op, UniqueConstraintError, type Transaction } from "sequelize";
import type { z } from "zod";
import { can, type Role } from "@/lib/permissions";
import {
  PresetOut,
  ViewStateOut,
  viewStateBody,
  type CreatePresetBody,
  type UpdatePresetBody,
  type ViewStateBody,
} from "@/lib/schemas/preset";
import type { Dataset, Preset } from "@/models";
import { db } from "./db";
import { conflict, forbidden, HttpError, notFound, uniqueName } from "./errors";

const PRESET_NAME_TAKEN = "A preset with that name already exists here.";

export interface Caller {
  userId: number;
  role: Role;
}

/**
 * Stored JSON is checked again on the way out; a row that no longer fits the schema is a server fault
 * (500), not the caller's bad input, so the ZodError is not passed on as such.
 */
function parseOut<S extends z.ZodType>(schema: S, value: unknown, what: string): z.infer<S> {
  const result = schema.safeParse(value);
  if (!result.success) throw new Error(`${what} does not match its output schema: ${result.error.message}`);
  return result.data;
}

export function presetOut(preset: Preset): PresetOut {
  return parseOut(
    PresetOut,
    {
      id: preset.id,
      labId: preset.labId,
      ownerId: preset.ownerId,
      name: preset.name,
      scope: preset.scope,
      blend: preset.blend,
      channels: preset.channels,
      version: preset.version,
      createdAt: preset.createdAt.toISOString(),
      updatedAt: preset.updatedAt.toISOString(),
    },
    `Preset ${preset.id}`,
  );
}

/** The scope within which a name must be unique (see migrations/0004): the whole lab, or one person. */
export const nameScopeKey = (scope: "private" | "lab", ownerId: number) => (scope === "lab" ? 0 : ownerId);

/** Lab presets, and the caller's own private ones; someone else's private preset is never visible. */
export const visibleTo = (labId: number, userId: number) => ({
  labId,
  [Op.or]: [{ scope: "lab" }, { scope: "private", ownerId: userId }],
});

export function assertMayChange(caller: Caller, scope: "private" | "lab"): void {
  if (scope === "lab" && !can(caller.role, "presets.edit")) throw forbidden("Only editors and owners change lab presets.");
}

export async function listPresets(labId: number, caller: Caller): Promise<PresetOut[]> {
  const rows = await db().Preset.findAll({ where: visibleTo(labId, caller.userId), order: [["scope", "ASC"], ["name", "ASC"], ["id", "ASC"]] });
  return rows.map(presetOut);
}

async function findVisible(labId: number, presetId: number, caller: Caller, transaction?: Transaction): Promise<Preset> {
  const preset = await db().Preset.findOne({ where: { id: presetId, ...visibleTo(labId, caller.userId) }, transaction });
  if (!preset) throw notFound("That preset");
  return preset;
}

export async function getPreset(labId: number, presetId: number, caller: Caller): Promise<PresetOut> {
  return presetOut(await findVisible(labId, presetId, caller));
}

export async function createPreset(labId: number, caller: Caller, body: CreatePresetBody): Promise<PresetOut> {
  assertMayChange(caller, body.scope);
  const preset = await uniqueName(PRESET_NAME_TAKEN, () =>
    db().Preset.create({
      labId,
      ownerId: caller.userId,
      nameScopeKey: nameScopeKey(body.scope, caller.userId),
      name: body.name,
      scope: body.scope,
      blend: body.blend,
      channels: body.channels,
    }),
  );
  return presetOut(preset);
}

export type UpdateOutcome = { ok: true; preset: PresetOut } | { ok: false; current: PresetOut };

/**
 * Saves only when the caller names the current version: the check and the write are one
 * UPDATE … WHERE id = ? AND version = ?, so of two concurrent saves of the same version one wins.
 */
export async function updatePreset(labId: number, presetId: number, caller: Caller, body: UpdatePresetBody): Promise<UpdateOutcome> {
  const { Preset, sequelize } = db();
  return sequelize.transaction(async (transaction) => {
    const preset = await findVisible(labId, presetId, caller, transaction);
    assertMayChange(caller, preset.scope);
    const changes = {
      ...(body.name !== undefined ? { name: body.name } : {}),
      ...(body.blend !== undefined ? { blend: body.blend } : {}),
      ...(body.channels !== undefined ? { channels: body.channels } : {}),
    };
    const [affected] = await uniqueName(PRESET_NAME_TAKEN, () =>
      Preset.update(
        { ...changes, version: sequelize.literal("version + 1") as unknown as number },
        { where: { id: preset.id, labId, version: body.version }, transaction },
      ),
    );
    const current = await Preset.findByPk(preset.id, { transaction });
    if (!current) throw notFound("That preset");
    return affected === 1 ? { ok: true, preset: presetOut(current) } : { ok: false, current: presetOut(current) };
  });
}

export async function deletePreset(labId: number, presetId: number, caller: Caller): Promise<void> {
  const { sequelize } = db();
  await sequelize.transaction(async (transaction) => {
    const preset = await findVisible(labId, presetId, caller, transaction);
    assertMayChange(caller, preset.scope);
    await preset.destroy({ transaction });
  });
}

const COPY_LIMIT = 100;

/** "<name> (copy)", then "(copy 2)", "(copy 3)" …, shortening the base so the name stays within 120 characters. */
export function copyName(base: string, n: number): string {
  const suffix = n === 1 ? " (copy)" : ` (copy ${n})`;
  return base.slice(0, 120 - suffix.length).trimEnd() + suffix;
}

/** Copies a visible preset into the caller's private presets under the first free copy name. */
export async function duplicatePreset(labId: number, presetId: number, caller: Caller): Promise<PresetOut> {
  const { Preset } = db();
  const source = await findVisible(labId, presetId, caller);
  for (let n = 1; n <= COPY_LIMIT; n++) {
    const name = copyName(source.name, n);
    // The database compares names with its collation (case-insensitive), as the unique index does.
    const taken = await Preset.count({ where: { labId, scope: "private", ownerId: caller.userId, name } });
    if (taken) continue;
    try {
      const copy = await Preset.create({
        labId,
        ownerId: caller.userId,
        nameScopeKey: nameScopeKey("private", caller.userId),
        name,
        scope: "private",
        blend: source.blend,
        channels: source.channels,
      });
      return presetOut(copy);
    } catch (error) {
      // Another request took this name between the check and the insert: try the next one.
      if (!(error instanceof UniqueConstraintError)) throw error;
    }
  }
  throw conflict(`There are already ${COPY_LIMIT} copies of this preset; rename some first.`);
}

// ---- View state ---------------------------------------------------------------------------------

function viewStateOut(datasetId: number, state: unknown, updatedAt: Date): ViewStateOut {
  const parsed = parseOut(viewStateBody, state, `View state of dataset ${datasetId}`);
  return parseOut(ViewStateOut, { datasetId, ...parsed, updatedAt: updatedAt.toISOString() }, `View state of dataset ${datasetId}`);
}

export async function getViewState(userId: number, datasetId: number): Promise<ViewStateOut> {
  const row = await db().ViewState.findOne({ where: { userId, datasetId } });
  if (!row) throw notFound("A saved view of this dataset");
  return viewStateOut(datasetId, row.state, row.updatedAt);
}

/** The plane position and channels must exist in this dataset; otherwise 400 with the field named. */
export function checkAgainstDataset(dataset: Dataset, body: ViewStateBody): void {
  const fields: Record<string, string> = {};
  const sizeZ = dataset.sizeZ ?? 1;
  const sizeT = dataset.sizeT ?? 1;
  const sizeC = dataset.sizeC ?? 1;
  if (body.z >= sizeZ) fields.z = `This dataset has ${sizeZ} z-slice${sizeZ === 1 ? "" : "s"} (0 to ${sizeZ - 1}).`;
  if (body.t >= sizeT) fields.t = `This dataset has ${sizeT} time point${sizeT === 1 ? "" : "s"} (0 to ${sizeT - 1}).`;
  body.channels.forEach((ch, i) => {
    if (ch.c >= sizeC) fields[`channels.${i}.c`] = `This dataset has ${sizeC} channel${sizeC === 1 ? "" : "s"} (0 to ${sizeC - 1}).`;
  });
  if (Object.keys(fields).length) throw new HttpError(400, "invalid_input", "The view does not fit this dataset.", fields);
}

/** Creates or replaces the caller's view of the dataset (one row per person and dataset). */
export async function saveViewState(userId: number, dataset: Dataset, body: ViewStateBody): Promise<ViewStateOut> {
  checkAgainstDataset(dataset, body);
  const { ViewState } = db();
  await ViewState.upsert({ userId, datasetId: dataset.id, state: body });
  return getViewState(userId, dataset.id);
}
