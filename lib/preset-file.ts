// Reading and writing the presets file (lib/schemas/preset-file.ts). Reading never throws: a bad file
// gives a list of problems, each with the line and column where the person can find it and the
// JSONPath of the value. Pure: shared by the import route and the tests.
import type { z } from "zod";
import type { PresetChannel } from "./schemas/preset";
import {
  PRESET_FILE_FORMAT,
  PRESET_FILE_VERSION,
  presetFileV1,
  type PresetFileEntry,
  type PresetFileV1,
} from "./schemas/preset-file";
import { formatPath, lineColumn, scanJson, type JsonLayout, type JsonPath } from "./json-positions";

export interface FileProblem {
  line: number;
  column: number;
  /** JSONPath of the value ("$" for the whole file). */
  path: string;
  message: string;
  /** UTF-16 offset, for ordering. */
  offset: number;
}

export type ReadPresetFile =
  | { ok: true; file: PresetFileV1; /** Where each preset's name is, for later messages (a name clash). */ nameAt: Omit<FileProblem, "message">[] }
  | { ok: false; problems: FileProblem[]; total: number };

/** A file with hundreds of mistakes is the wrong file; the first ones are enough to see that. */
export const MAX_PROBLEMS = 50;

const BOM = 0xfeff;

/** The words zod's defaults use, said the way a person editing a file thinks of them. */
const typeWords: Record<string, string> = {
  string: "text in double quotes",
  number: "a number",
  int: "a whole number",
  boolean: "true or false",
  object: "an object { … }",
  array: "a list [ … ]",
  null: "null",
};

function kindOf(value: unknown): string {
  if (value === null) return "null";
  if (Array.isArray(value)) return "a list";
  if (typeof value === "string") return "text";
  if (typeof value === "number") return Number.isInteger(value) ? "a whole number" : "a number";
  if (typeof value === "boolean") return String(value);
  return "an object";
}

/** Per-parse messages for the cases our schemas leave to zod's defaults; schema messages take precedence. */
const friendly: z.core.$ZodErrorMap = (issue) => {
  switch (issue.code) {
    case "invalid_type": {
      const want = typeWords[issue.expected] ?? issue.expected;
      return issue.input === undefined ? `Expected ${want}.` : `Expected ${want}, found ${kindOf(issue.input)}.`;
    }
    case "invalid_value":
      return `Expected ${issue.values.map((v) => JSON.stringify(v)).join(" or ")}.`;
    case "too_small":
      return issue.origin === "array"
        ? `At least ${issue.minimum} item${issue.minimum === 1 ? "" : "s"}.`
        : issue.origin === "string"
          ? `At least ${issue.minimum} character${issue.minimum === 1 ? "" : "s"}.`
          : `At least ${issue.minimum}.`;
    case "too_big":
      return issue.origin === "array"
        ? `At most ${issue.maximum} items.`
        : issue.origin === "string"
          ? `At most ${issue.maximum} characters.`
          : `At most ${issue.maximum}.`;
    default:
      return undefined;
  }
};

function problemAt(text: string, offset: number, path: JsonPath, message: string): FileProblem {
  return { ...lineColumn(text, offset), path: formatPath(path), message, offset };
}

/** A zod issue pointed at its place in the text: the value itself, the unknown key, or the object missing a field. */
function problemsOf(issue: z.core.$ZodIssue, text: string, layout: JsonLayout): FileProblem[] {
  const path = issue.path.filter((p): p is string | number => typeof p !== "symbol");
  if (issue.code === "unrecognized_keys") {
    return issue.keys.map((key) => {
      const at = layout.key([...path, key]) ?? layout.nearest(path).span;
      return problemAt(text, at.start, [...path, key], `Unknown field "${key}": version ${PRESET_FILE_VERSION} of this format has no such field.`);
    });
  }
  const exact = layout.value(path);
  if (exact) return [problemAt(text, exact.start, path, issue.message)];
  // The value is missing: point at the object that should hold it.
  const holder = layout.nearest(path);
  const missing = `Missing "${String(path[path.length - 1])}".`;
  // For a plain type check the field's name says enough ("expected text" would mislead for a nullable field).
  return [problemAt(text, holder.span.start, path, issue.code === "invalid_type" ? missing : `${missing} ${issue.message}`)];
}

/**
 * Names compare as the database's utf8mb4_unicode_ci collation roughly does (case and accents ignored,
 * trailing spaces ignored), so most clashes get a message with a line; the unique index has the last word.
 */
export const nameKey = (name: string) =>
  name
    .normalize("NFD")
    .replace(/[\u0300-\u036f]/g, "")
    .toLowerCase()
    .trimEnd();

function duplicateNames(file: PresetFileV1, text: string, layout: JsonLayout): FileProblem[] {
  const first = new Map<string, number>();
  const problems: FileProblem[] = [];
  file.presets.forEach((preset, index) => {
    const key = nameKey(preset.name);
    const earlier = first.get(key);
    if (earlier === undefined) {
      first.set(key, index);
      return;
    }
    const at = layout.value(["presets", index, "name"])!;
    const earlierAt = layout.value(["presets", earlier, "name"])!;
    problems.push(
      problemAt(
        text,
        at.start,
        ["presets", index, "name"],
        `The name "${preset.name}" is already used by the preset on line ${lineColumn(text, earlierAt.start).line}; names in one file must differ.`,
      ),
    );
  });
  return problems;
}

function finish(problems: FileProblem[]): ReadPresetFile {
  const sorted = [...problems].sort((a, b) => a.offset - b.offset);
  return { ok: false, problems: sorted.slice(0, MAX_PROBLEMS), total: sorted.length };
}

/** The format and version are checked first: a different file or a newer version gets one clear message, not fifty. */
function headerProblems(value: unknown, text: string, layout: JsonLayout): FileProblem[] {
  if (typeof value !== "object" || value === null || Array.isArray(value)) {
    return [
      problemAt(
        text,
        layout.nearest([]).span.start,
        [],
        `A presets file holds one object: { "format": "${PRESET_FILE_FORMAT}", "version": ${PRESET_FILE_VERSION}, "presets": [ … ] }.`,
      ),
    ];
  }
  const header = value as { format?: unknown; version?: unknown };
  if (header.format !== PRESET_FILE_FORMAT) {
    const at = layout.value(["format"]) ?? layout.nearest([]).span;
    const message =
      header.format === undefined
        ? `Missing "format": "${PRESET_FILE_FORMAT}"; this does not look like a Fluxframe presets file.`
        : `This is not a Fluxframe presets file: "format" must be "${PRESET_FILE_FORMAT}".`;
    return [problemAt(text, at.start, ["format"], message)];
  }
  if (header.version !== PRESET_FILE_VERSION) {
    const at = layout.value(["version"]) ?? layout.nearest([]).span;
    const message =
      typeof header.version === "number" && Number.isInteger(header.version) && header.version > PRESET_FILE_VERSION
        ? `This file uses version ${header.version} of the presets format; this Fluxframe reads version ${PRESET_FILE_VERSION}. Export it again from a Fluxframe that writes version ${PRESET_FILE_VERSION}.`
        : header.version === undefined
          ? `Missing "version": ${PRESET_FILE_VERSION}.`
          : `"version" must be ${PRESET_FILE_VERSION}.`;
    return [problemAt(text, at.start, ["version"], message)];
  }
  return [];
}

/** Parses and validates the text of a presets file. */
export function readPresetFile(raw: string): ReadPresetFile {
  // A byte-order mark is what some editors put first in a UTF-8 file; RFC 8259 §8.1 lets a reader skip it.
  const text = raw.charCodeAt(0) === BOM ? raw.slice(1) : raw;
  const scanned = scanJson(text);
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch (error) {
    // The scanner follows the same grammar (tests/lib/json-positions.test.ts compares them on random
    // texts); if it ever disagrees, the engine's own message is better than none.
    if (scanned.ok) return finish([problemAt(text, 0, [], `The file is not valid JSON: ${(error as Error).message}`)]);
    return finish([problemAt(text, scanned.error.offset, [], scanned.error.message)]);
  }
  // Valid for JSON.parse but refused by the scanner: only nesting deeper than MAX_DEPTH.
  if (!scanned.ok) return finish([problemAt(text, scanned.error.offset, [], scanned.error.message)]);
  const { layout } = scanned;

  const header = headerProblems(value, text, layout);
  if (header.length) return finish(header);

  const problems: FileProblem[] = layout.duplicateKeys.map((d) =>
    problemAt(text, d.key.start, d.path, `"${String(d.path[d.path.length - 1])}" appears twice in this object; JSON readers keep only the last one.`),
  );
  const parsed = presetFileV1.safeParse(value, { error: friendly });
  if (!parsed.success) {
    for (const issue of parsed.error.issues) problems.push(...problemsOf(issue, text, layout));
    return finish(problems);
  }
  problems.push(...duplicateNames(parsed.data, text, layout));
  if (problems.length) return finish(problems);
  const nameAt = parsed.data.presets.map((_, index) => {
    const path = ["presets", index, "name"];
    const offset = layout.value(path)!.start;
    return { ...lineColumn(text, offset), path: formatPath(path), offset };
  });
  return { ok: true, file: parsed.data, nameAt };
}

/** "Line 12, column 9: message": how one problem reads in the error answer and on the page. */
export const problemText = (p: Pick<FileProblem, "line" | "column" | "message">) => `Line ${p.line}, column ${p.column}: ${p.message}`;

/** The inverse of problemText, for the page to set the line and column apart; null for other messages. */
export function parseProblemText(text: string): { line: number; column: number; message: string } | null {
  const m = /^Line (\d+), column (\d+): ([\s\S]*)$/.exec(text);
  return m ? { line: Number(m[1]), column: Number(m[2]), message: m[3] } : null;
}

/**
 * The problems as the `fields` of the one error shape: JSONPath → "Line L, column C: message", in the
 * order of the file. A second problem at the same path gets " (2)" after its key.
 */
export function problemFields(read: { problems: FileProblem[]; total: number }): Record<string, string> {
  const fields: Record<string, string> = {};
  for (const p of read.problems) {
    let key = p.path;
    for (let k = 2; key in fields; k++) key = `${p.path} (${k})`;
    fields[key] = problemText(p);
  }
  if (read.total > read.problems.length) fields["(more)"] = `…and ${read.total - read.problems.length} more problems after these.`;
  return fields;
}

/** The file text for these presets: two-space indentation, so the line numbers of messages are useful. */
export function writePresetFile(
  presets: readonly { name: string; scope?: "private" | "lab"; blend: "add" | "max"; channels: readonly PresetChannel[] }[],
  exportedAt: Date,
): string {
  const file: PresetFileV1 = {
    format: PRESET_FILE_FORMAT,
    version: PRESET_FILE_VERSION,
    exportedAt: exportedAt.toISOString(),
    presets: presets.map(
      (p): PresetFileEntry => ({ name: p.name, ...(p.scope ? { scope: p.scope } : {}), blend: p.blend, channels: [...p.channels] }),
    ),
  };
  return `${JSON.stringify(file, null, 2)}\n`;
}

/** "<name> (imported)", then "(imported 2)" …, shortening the base so the name stays within 120 characters. */
export function importedName(base: string, n: number): string {
  const suffix = n === 1 ? " (imported)" : ` (imported ${n})`;
  return base.slice(0, 120 - suffix.length).trimEnd() + suffix;
}
