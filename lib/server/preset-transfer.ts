import "server-only";
import { Op, UniqueConstraintError } from "sequelize";
import { importedName, problemFields, readPresetFile, writePresetFile, type FileProblem } from "@/lib/preset-file";
import type { PresetOut } from "@/lib/schemas/preset";
import type { importPresetsBody } from "@/lib/schemas/preset-file";
import type { z } from "zod";
import { db } from "./db";
import { conflict, HttpError, notFound } from "./errors";
import { assertMayChange, nameScopeKey, presetOut, visibleTo, type Caller } from "./presets";

// Export and import of presets as a file (format: lib/schemas/preset-file.ts, documented in
// DEVELOPERS.md). Import is all or nothing: one transaction, and any problem stores no preset.

/** The caller's visible presets (all, or the listed ids in list order) as the text of a presets file. */
export async function exportPresets(labId: number, caller: Caller, ids?: number[]): Promise<{ text: string; count: number }> {
  const where = ids ? { ...visibleTo(labId, caller.userId), id: { [Op.in]: ids } } : visibleTo(labId, caller.userId);
  const rows = await db().Preset.findAll({ where, order: [["scope", "ASC"], ["name", "ASC"], ["id", "ASC"]] });
  // One unknown or invisible id refuses the whole export: a partial file would look complete.
  if (ids && rows.length !== ids.length) throw notFound("Some of those presets");
  const presets = rows.map(presetOut);
  return { text: writePresetFile(presets, new Date()), count: presets.length };
}

export interface ImportOutcome {
  presets: PresetOut[];
  /** Presets stored under another name because theirs was taken (onClash "rename"). */
  renamed: { from: string; to: string }[];
}

const RENAME_LIMIT = 100;

/**
 * Stores every preset of the file in the chosen scope, or none. A name already used in that scope
 * (compared by the database's collation, as the unique index does) is refused with a 409 listing each
 * clash and its line, or with onClash "rename" stored as "<name> (imported)", "(imported 2)" ….
 */
export async function importPresets(labId: number, caller: Caller, body: z.output<typeof importPresetsBody>): Promise<ImportOutcome> {
  assertMayChange(caller, body.scope);
  const read = readPresetFile(body.text);
  if (!read.ok) {
    const count = read.total === 1 ? "a problem" : `${read.total} problems`;
    throw new HttpError(400, "invalid_input", `The file has ${count}; nothing was imported.`, problemFields(read));
  }
  const { Preset, sequelize } = db();
  const key = nameScopeKey(body.scope, caller.userId);
  const where = body.scope === "lab" ? { labId, scope: "lab" as const } : { labId, scope: "private" as const, ownerId: caller.userId };
  const scopeWords = body.scope === "lab" ? "the lab's presets" : "your private presets";

  try {
    return await sequelize.transaction(async (transaction) => {
      const created: PresetOut[] = [];
      const renamed: ImportOutcome["renamed"] = [];
      const clashes: FileProblem[] = [];
      const isTaken = async (name: string) => (await Preset.count({ where: { ...where, name }, transaction })) > 0;

      for (const [index, entry] of read.file.presets.entries()) {
        let name = entry.name;
        if (await isTaken(name)) {
          if (body.onClash === "refuse") {
            clashes.push({ ...read.nameAt[index], message: `A preset named "${entry.name}" already exists in ${scopeWords}.` });
            continue;
          }
          let n = 1;
          while (await isTaken((name = importedName(entry.name, n)))) {
            if (++n > RENAME_LIMIT) throw conflict(`"${entry.name}" has been imported ${RENAME_LIMIT} times already; rename some copies first.`);
          }
          renamed.push({ from: entry.name, to: name });
        }
        const row = await Preset.create(
          { labId, ownerId: caller.userId, nameScopeKey: key, name, scope: body.scope, blend: entry.blend, channels: entry.channels },
          { transaction },
        );
        created.push(presetOut(row));
      }

      if (clashes.length) {
        // Throwing rolls back the presets created above, so the file is taken whole or not at all.
        const fields = problemFields({ problems: clashes, total: clashes.length });
        const what = clashes.length === 1 ? "One name is" : `${clashes.length} names are`;
        const fix = clashes.length === 1 ? "Rename it in the file, or import with a new name." : "Rename them in the file, or import with new names.";
        throw conflict(`${what} already used in ${scopeWords}; nothing was imported. ${fix}`, fields);
      }
      return { presets: created, renamed };
    });
  } catch (error) {
    // Another request took a name between the check and the insert (or the collation matched names
    // the check did not): the transaction has rolled back; the person can simply try again.
    if (error instanceof UniqueConstraintError) throw conflict("A preset with one of these names was saved meanwhile; nothing was imported. Try again.");
    throw error;
  }
}
