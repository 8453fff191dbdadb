import "server-only";
import { Op, type Transaction } from "sequelize";
import { buildTableFromStops, parseTableCsv, parseTableJson, rgbToHexString, tableToCsv, tableToJson, type LineError } from "@/lib/imaging/table-editor";
import { can, type Role } from "@/lib/permissions";
import {
  ColourTableOut,
  type ColourStop,
  type ColourTableScope,
  type CreateColourTableBody,
  type ImportColourTableBody,
  type InterpolationSpace,
  type UpdateColourTableBody,
} from "@/lib/schemas/colour-table";
import { idParam } from "@/lib/schemas/lab";
import type { ColourTable } from "@/models";
import { audit } from "./audit";
import { db } from "./db";
import { forbidden, HttpError, notFound, uniqueName } from "./errors";

const TABLE_NAME_TAKEN = "A colour table with that name already exists here.";

// Colour tables, scoped like presets (lib/server/presets.ts) with one more scope: "public" tables
// are listed in every lab and readable by every member of any lab, but only editors and owners of
// the lab that made one may change or delete it. Permissions reuse the preset actions: reading
// needs presets.read, lab and public tables need presets.edit to create or change; a private table
// belongs to its owner alone.

/** The caller, in the lab whose address the request used. */
export interface Caller {
  userId: number;
  role: Role;
  labId: number;
}

/** Lab and public tables share key 0: a lab's shared tables have distinct names (migrations/0006). */
const nameScopeKey = (scope: ColourTableScope, ownerId: number) => (scope === "private" ? ownerId : 0);

/** The route's table id; anything but a plain positive integer is a 404, like an unknown id. */
export function colourTableId(raw: unknown): number {
  const id = idParam.safeParse(raw);
  if (!id.success) throw notFound("That colour table");
  return id.data;
}

/** This lab's shared tables, the caller's own private ones here, and public tables of every lab. */
const visibleTo = (caller: Caller) => ({
  [Op.or]: [
    { labId: caller.labId, scope: "lab" },
    { labId: caller.labId, scope: "private", ownerId: caller.userId },
    { scope: "public" },
  ],
});

function mayEdit(table: ColourTable, caller: Caller): boolean {
  if (table.scope === "private") return table.ownerId === caller.userId && table.labId === caller.labId;
  return table.labId === caller.labId && can(caller.role, "presets.edit");
}

function assertMayEdit(table: ColourTable, caller: Caller): void {
  if (mayEdit(table, caller)) return;
  if (table.labId !== caller.labId) throw forbidden("This public colour table belongs to another lab; you may use and export it, not change it.");
  throw forbidden("Only editors and owners change the lab's shared colour tables.");
}

function assertMayCreate(scope: ColourTableScope, caller: Caller): void {
  if (scope !== "private" && !can(caller.role, "presets.edit")) throw forbidden("Only editors and owners create lab or public colour tables.");
}

const include = () => {
  const { Lab, User } = db();
  return [
    { model: Lab, as: "lab", attributes: ["id", "name"] },
    { model: User, as: "owner", attributes: ["id", "name"] },
  ];
};

export function colourTableOut(table: ColourTable, caller: Caller): ColourTableOut {
  const result = ColourTableOut.safeParse({
    id: table.id,
    labId: table.labId,
    labName: table.lab?.name ?? "",
    ownerId: table.ownerId,
    ownerName: table.owner?.name ?? null,
    name: table.name,
    scope: table.scope,
    space: table.space,
    stops: table.stops,
    rgb: rgbToHexString(new Uint8Array(table.rgb)),
    version: table.version,
    canEdit: mayEdit(table, caller),
    createdAt: table.createdAt.toISOString(),
    updatedAt: table.updatedAt.toISOString(),
  });
  // A stored row that no longer fits the schema is a server fault (500), not the caller's input.
  if (!result.success) throw new Error(`Colour table ${table.id} does not match its output schema: ${result.error.message}`);
  return result.data;
}

export async function listColourTables(caller: Caller): Promise<ColourTableOut[]> {
  const rows = await db().ColourTable.findAll({ where: visibleTo(caller), include: include(), order: [["name", "ASC"], ["id", "ASC"]] });
  return rows.map((row) => colourTableOut(row, caller));
}

async function findVisible(tableId: number, caller: Caller, transaction?: Transaction): Promise<ColourTable> {
  const table = await db().ColourTable.findOne({ where: { id: tableId, ...visibleTo(caller) }, include: include(), transaction });
  if (!table) throw notFound("That colour table");
  return table;
}

export async function getColourTable(tableId: number, caller: Caller): Promise<ColourTableOut> {
  return colourTableOut(await findVisible(tableId, caller), caller);
}

/** Stops are kept sorted by position (stable, so two stops at one position keep their order). */
const sortStops = (stops: readonly ColourStop[]) => [...stops].sort((a, b) => a.position - b.position);

interface NewTable {
  name: string;
  scope: ColourTableScope;
  space: InterpolationSpace | null;
  stops: ColourStop[] | null;
  rgb: Uint8Array;
  via: "editor" | "csv" | "json";
}

async function insert(caller: Caller, table: NewTable): Promise<ColourTableOut> {
  assertMayCreate(table.scope, caller);
  const { ColourTable, sequelize } = db();
  const id = await sequelize.transaction(async (transaction) => {
    const row = await uniqueName(TABLE_NAME_TAKEN, () =>
      ColourTable.create(
        {
          labId: caller.labId,
          ownerId: caller.userId,
          nameScopeKey: nameScopeKey(table.scope, caller.userId),
          name: table.name,
          scope: table.scope,
          space: table.space,
          stops: table.stops,
          rgb: Buffer.from(table.rgb),
        },
        { transaction },
      ),
    );
    await audit(
      { action: "colour_table.created", labId: caller.labId, actorId: caller.userId, target: `colour-table:${row.id}`, detail: { name: table.name, scope: table.scope, via: table.via } },
      transaction,
    );
    return row.id;
  });
  return getColourTable(id, caller);
}

/** A table made in the editor: the entries are computed here from the stops, never taken from the client. */
export async function createColourTable(caller: Caller, body: CreateColourTableBody): Promise<ColourTableOut> {
  const stops = sortStops(body.stops);
  const { rgb } = buildTableFromStops(stops, body.space);
  return insert(caller, { name: body.name, scope: body.scope, space: body.space, stops, rgb, via: "editor" });
}

/** Line errors → one 400 whose fields are keyed "line 12" (the file as a whole: "file"), nothing stored. */
function fileProblems(errors: readonly LineError[], format: "csv" | "json"): HttpError {
  const fields: Record<string, string> = {};
  for (const e of errors) {
    const key = e.line > 0 ? `line ${e.line}` : "file";
    fields[key] = fields[key] ? `${fields[key]}; ${e.message}` : e.message;
  }
  const n = errors.length;
  return new HttpError(400, "invalid_input", `The ${format.toUpperCase()} file has ${n === 1 ? "a problem" : `${n} problems`}; nothing was imported.`, fields);
}

/** Imports a CSV (`index,r,g,b`) or JSON (format version 1) file; any problem refuses the whole file. */
export async function importColourTable(caller: Caller, body: ImportColourTableBody): Promise<ColourTableOut> {
  assertMayCreate(body.scope, caller);
  if (body.format === "csv") {
    if (!body.name) throw new HttpError(400, "invalid_input", "Give the imported table a name.", { name: "The colour table needs a name." });
    const parsed = parseTableCsv(body.content);
    if (!parsed.ok) throw fileProblems(parsed.errors, "csv");
    return insert(caller, { name: body.name, scope: body.scope, space: null, stops: null, rgb: parsed.value, via: "csv" });
  }
  const parsed = parseTableJson(body.content);
  if (!parsed.ok) throw fileProblems(parsed.errors, "json");
  const file = parsed.value;
  return insert(caller, { name: body.name ?? file.name, scope: body.scope, space: file.space, stops: file.stops && sortStops(file.stops), rgb: file.rgb, via: "json" });
}

export type UpdateOutcome = { ok: true; table: ColourTableOut } | { ok: false; current: ColourTableOut };

/**
 * Saves only when the caller names the current version: the check and the write are one
 * UPDATE … WHERE id = ? AND version = ?, so of two concurrent saves of the same version one wins.
 * New stops replace the entries (recomputed here); a rename keeps them as they are.
 */
export async function updateColourTable(tableId: number, caller: Caller, body: UpdateColourTableBody): Promise<UpdateOutcome> {
  const { ColourTable, sequelize } = db();
  return sequelize.transaction(async (transaction) => {
    const table = await findVisible(tableId, caller, transaction);
    assertMayEdit(table, caller);
    const changes: Partial<{ name: string; space: InterpolationSpace; stops: ColourStop[]; rgb: Buffer }> = {};
    if (body.name !== undefined) changes.name = body.name;
    if (body.stops !== undefined && body.space !== undefined) {
      changes.stops = sortStops(body.stops);
      changes.space = body.space;
      changes.rgb = Buffer.from(buildTableFromStops(changes.stops, body.space).rgb);
    }
    const [affected] = await uniqueName(TABLE_NAME_TAKEN, () =>
      ColourTable.update(
        { ...changes, version: sequelize.literal("version + 1") as unknown as number },
        { where: { id: table.id, version: body.version }, transaction },
      ),
    );
    const current = await findVisible(table.id, caller, transaction);
    return affected === 1 ? { ok: true, table: colourTableOut(current, caller) } : { ok: false, current: colourTableOut(current, caller) };
  });
}

export async function deleteColourTable(tableId: number, caller: Caller): Promise<void> {
  const { sequelize } = db();
  await sequelize.transaction(async (transaction) => {
    const table = await findVisible(tableId, caller, transaction);
    assertMayEdit(table, caller);
    await table.destroy({ transaction });
    await audit(
      { action: "colour_table.deleted", labId: table.labId, actorId: caller.userId, target: `colour-table:${table.id}`, detail: { name: table.name, scope: table.scope } },
      transaction,
    );
  });
}

/** A file name from the table's name: letters, digits, dashes; never empty. */
export function exportFileName(name: string, format: "csv" | "json"): string {
  const stem = name.normalize("NFKD").replace(/[^\w-]+/g, "-").replace(/^-+|-+$/g, "").slice(0, 80) || "colour-table";
  return `${stem}.${format}`;
}

/** The file for a visible table: CSV (`index,r,g,b`, header line, "\n" line ends) or JSON (format version 1). */
export async function exportColourTable(tableId: number, caller: Caller, format: "csv" | "json"): Promise<{ body: string; fileName: string; contentType: string }> {
  const table = await findVisible(tableId, caller);
  const rgb = new Uint8Array(table.rgb);
  const out = colourTableOut(table, caller);
  return format === "csv"
    ? { body: tableToCsv(rgb), fileName: exportFileName(table.name, "csv"), contentType: "text/csv; charset=utf-8" }
    : { body: tableToJson({ name: table.name, space: out.space, stops: out.stops, rgb }), fileName: exportFileName(table.name, "json"), contentType: "application/json; charset=utf-8" };
}
