// The presets file (lib/schemas/preset-file.ts, lib/preset-file.ts): version 1 stays readable, export
// then import gives the same presets, and every kind of bad file gets messages with the line and column
// where the person finds the mistake and the JSONPath of the value.
import { readFileSync } from "node:fs";
import { join } from "node:path";
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import {
  importedName,
  MAX_PROBLEMS,
  parseProblemText,
  problemFields,
  problemText,
  readPresetFile,
  writePresetFile,
  type FileProblem,
} from "@/lib/preset-file";
import type { PresetChannel } from "@/lib/schemas/preset";
import { importPresetsBody, MAX_FILE_PRESETS, PRESET_FILE_FORMAT } from "@/lib/schemas/preset-file";

const fixture = readFileSync(join(import.meta.dirname, "..", "fixtures", "presets-v1.json"), "utf8");

const channel = (index: number, overrides: Partial<PresetChannel> = {}): PresetChannel => ({
  match: { name: `Ch${index}`, emissionNm: 500 + index * 50, index },
  visible: true,
  colour: "#00ff66",
  tableId: null,
  gamma: 1,
  range: { mode: "counts", black: 100, white: 3000 },
  ...overrides,
});

/** The problems of a file that must be refused, as "line:column path message" for readable failures. */
function problems(text: string): FileProblem[] {
  const read = readPresetFile(text);
  if (read.ok) throw new Error("expected the file to be refused");
  return read.problems;
}
const brief = (p: FileProblem) => ({ at: `${p.line}:${p.column}`, path: p.path });

/** A valid file as the exporter writes it, with one line changed by the test. */
const exported = () =>
  writePresetFile(
    [
      { name: "First", scope: "lab", blend: "add", channels: [channel(0), channel(1)] },
      { name: "Second", scope: "private", blend: "max", channels: [channel(0, { range: { mode: "percentiles", low: 0.5, high: 99.5 } })] },
    ],
    new Date("2026-05-01T10:00:00.000Z"),
  );
/** The 1-based line of the first line of `text` containing `needle`, and the column where it starts. */
function whereIs(text: string, needle: string, nth = 1): { line: number; column: number } {
  let from = 0;
  let at = -1;
  for (let k = 0; k < nth; k++) {
    at = text.indexOf(needle, from);
    from = at + 1;
  }
  if (at < 0) throw new Error(`${needle} not in text`);
  const before = text.slice(0, at).split("\n");
  return { line: before.length, column: before[before.length - 1].length + 1 };
}

describe("the version-1 presets file", () => {
  it("still reads the checked-in version-1 example with every field as written", () => {
    // tests/fixtures/presets-v1.json is the format's reference example; if this breaks, old files break.
    const read = readPresetFile(fixture);
    if (!read.ok) throw new Error(JSON.stringify(read.problems));
    expect(read.file.format).toBe(PRESET_FILE_FORMAT);
    expect(read.file.version).toBe(1);
    expect(read.file).toEqual(JSON.parse(fixture));
  });

  it("writes a file that reads back to the same presets (names with any characters, both range modes, clip marks)", () => {
    const name = fc.string({ unit: "grapheme", minLength: 1, maxLength: 40 }).map((s) => s.trim()).filter((s) => s.length > 0);
    fc.assert(
      fc.property(fc.uniqueArray(name, { minLength: 1, maxLength: 5, selector: (s) => s.normalize("NFD").replace(/[\u0300-\u036f]/g, "").toLowerCase() }), (names) => {
        const presets = names.map((n, i) => ({
          name: n,
          scope: (i % 2 ? "lab" : "private") as "lab" | "private",
          blend: (i % 2 ? "max" : "add") as "add" | "max",
          channels: [channel(0, { gamma: 0.25 + i, clipMarks: { high: "#ff0000", low: "#0000ff", lowMode: "percent", lowPercent: 0.5 } }), channel(1, { range: { mode: "percentiles", low: 0, high: 100 } })],
        }));
        const read = readPresetFile(writePresetFile(presets, new Date(0)));
        if (!read.ok) throw new Error(JSON.stringify(read.problems));
        expect(read.file.presets).toEqual(presets);
        expect(read.file.exportedAt).toBe("1970-01-01T00:00:00.000Z");
      }),
      { numRuns: 100 },
    );
  });

  it("skips a byte-order mark and counts Windows line ends once", () => {
    const text = "\ufeff" + exported().replace(/\n/g, "\r\n").replace('"colour": "#00ff66"', '"colour": "teal"');
    const [p] = problems(text);
    expect(brief(p)).toEqual({ at: `${whereIs(exported(), '"#00ff66"').line}:${whereIs(exported(), '"#00ff66"').column}`, path: "$.presets[0].channels[0].colour" });
    expect(readPresetFile("\ufeff" + exported()).ok).toBe(true);
  });
});

describe("a file that is not valid JSON", () => {
  it("names the line and column of the slip and nothing else", () => {
    const good = exported();
    // A comma lost at the end of the "blend" line of the second preset.
    const text = good.replace('"blend": "max",', '"blend": "max"');
    const at = whereIs(text, '"channels"', 2);
    const list = problems(text);
    expect(list).toHaveLength(1);
    expect(brief(list[0])).toEqual({ at: `${at.line}:${at.column}`, path: "$" });
    expect(list[0].message).toContain("is a comma missing before it?");
  });

  it.each([
    ["an empty file", "", "1:1", "The file is empty"],
    ["a trailing comma", '{\n  "format": "fluxframe-presets",\n}', "2:32", "Remove this comma"],
    ["a cut-off file", '{\n  "format": "fluxframe-presets",\n  "presets": [\n', "4:1", "The file ends before the [ opened on line 3"],
    ["single quotes", "{\n  'format': 1\n}", "2:3", "double quotes"],
  ])("%s", (_label, text, at, message) => {
    const [p] = problems(text);
    expect(`${p.line}:${p.column}`).toBe(at);
    expect(p.message).toContain(message);
  });
});

describe("a file that is JSON but not a presets file", () => {
  it.each([
    ["a list", "[1, 2]", "1:1", "$", "A presets file holds one object"],
    ["another format", '{\n  "format": "colour-table",\n  "version": 1\n}', "2:13", "$.format", "This is not a Fluxframe presets file"],
    ["no format", '{\n  "presets": []\n}', "1:1", "$.format", 'Missing "format"'],
    ["a newer version", '{\n  "format": "fluxframe-presets",\n  "version": 2,\n  "presets": [{ "x": 1 }]\n}', "3:14", "$.version", "version 2 of the presets format; this Fluxframe reads version 1"],
    ["no version", '{\n  "format": "fluxframe-presets",\n  "presets": []\n}', "1:1", "$.version", 'Missing "version"'],
  ])("%s gets one message about that, not one per preset", (_label, text, at, path, message) => {
    const list = problems(text);
    expect(list).toHaveLength(1);
    expect(brief(list[0])).toEqual({ at, path });
    expect(list[0].message).toContain(message);
  });
});

describe("schema errors: the JSONPath and the line where the value starts", () => {
  it("points at a bad value, an unknown field's key, and the object that misses a field", () => {
    const text = exported()
      .replace('"colour": "#00ff66"', '"colour": "green"') // first preset, channel 0
      .replace('"blend": "max"', '"blend": "multiply"')
      .replace('"gamma": 1,', '"gamma": 1,\n          "brightness": 3,') // first channel gets an unknown field
      .replace('"visible": true,', ""); // first channel loses "visible"
    const list = problems(text);
    const by = Object.fromEntries(list.map((p) => [p.path, p]));
    const atText = (needle: string, nth = 1) => {
      const w = whereIs(text, needle, nth);
      return `${w.line}:${w.column}`;
    };
    expect(`${by["$.presets[0].channels[0].colour"].line}:${by["$.presets[0].channels[0].colour"].column}`).toBe(atText('"green"'));
    expect(by["$.presets[0].channels[0].colour"].message).toBe("Use a colour written as #rrggbb.");
    expect(`${by["$.presets[1].blend"].line}:${by["$.presets[1].blend"].column}`).toBe(atText('"multiply"'));
    expect(by["$.presets[1].blend"].message).toBe("Choose add or max.");
    expect(`${by["$.presets[0].channels[0].brightness"].line}:${by["$.presets[0].channels[0].brightness"].column}`).toBe(atText('"brightness"'));
    expect(by["$.presets[0].channels[0].brightness"].message).toContain('Unknown field "brightness"');
    // "visible" is missing: the message points at the channel object that should hold it.
    const missing = by["$.presets[0].channels[0].visible"];
    expect(missing.message).toBe('Missing "visible".');
    const channelStart = whereIs(text, '"channels": [', 1);
    expect(missing.line).toBe(channelStart.line + 1);
    // In file order.
    expect(list.map((p) => p.offset)).toEqual([...list.map((p) => p.offset)].sort((a, b) => a - b));
  });

  it("puts a black point above the white point on the white point's line, with the schema's message", () => {
    const text = exported().replace('"white": 3000', '"white": 50');
    const [p] = problems(text);
    expect(p.path).toBe("$.presets[0].channels[0].range.white");
    expect(p.line).toBe(whereIs(text, '"white": 50').line);
    expect(p.message).toBe("The black point must be below the white point.");
  });

  it("says which type was expected and which was found", () => {
    const [p] = problems(exported().replace('"gamma": 1,', '"gamma": "1",'));
    expect(p).toMatchObject({ path: "$.presets[0].channels[0].gamma", message: "Expected a number, found text." });
  });

  it("refuses two presets whose names differ only in case or accents, naming the line of the first", () => {
    const text = exported().replace('"name": "Second"', '"name": "fírst"');
    const [p] = problems(text);
    expect(p.path).toBe("$.presets[1].name");
    expect(p.message).toBe(`The name "fírst" is already used by the preset on line ${whereIs(text, '"First"').line}; names in one file must differ.`);
  });

  it("refuses a key written twice in one object at the second one", () => {
    const text = exported().replace('"blend": "add",', '"blend": "add",\n      "blend": "max",');
    const [p] = problems(text);
    expect(p.path).toBe("$.presets[0].blend");
    expect(p.line).toBe(whereIs(text, '"blend": "max"').line);
    expect(p.message).toContain("appears twice");
  });

  it("refuses an empty list and more than MAX_FILE_PRESETS presets", () => {
    expect(problems('{"format": "fluxframe-presets", "version": 1, "presets": []}')[0]).toMatchObject({ path: "$.presets", message: "The file holds no presets." });
    const many = writePresetFile(
      Array.from({ length: MAX_FILE_PRESETS + 1 }, (_, i) => ({ name: `P${i}`, blend: "add" as const, channels: [channel(0)] })),
      new Date(0),
    );
    expect(problems(many)[0]).toMatchObject({ path: "$.presets", line: 5 });
  });

  it(`lists at most ${MAX_PROBLEMS} problems and says how many more there are`, () => {
    const text = writePresetFile(
      Array.from({ length: 60 }, (_, i) => ({ name: `P${i}`, blend: "add" as const, channels: [channel(0, { colour: "#zzzzzz" })] })),
      new Date(0),
    );
    const read = readPresetFile(text);
    expect(read.ok).toBe(false);
    if (read.ok) return;
    expect(read.problems).toHaveLength(MAX_PROBLEMS);
    expect(read.total).toBe(60);
    const fields = problemFields(read);
    expect(Object.keys(fields)).toHaveLength(MAX_PROBLEMS + 1);
    expect(fields["(more)"]).toBe("…and 10 more problems after these.");
    expect(fields["$.presets[0].channels[0].colour"]).toMatch(/^Line \d+, column \d+: Use a colour written as #rrggbb\.$/);
  });
});

describe("problemFields", () => {
  it("keys messages by JSONPath in file order and keeps a second message at the same path", () => {
    const p = (path: string, line: number, message: string): FileProblem => ({ path, line, column: 3, message, offset: line * 10 });
    expect(problemFields({ problems: [p("$.a", 1, "one"), p("$.a", 2, "two"), p("$", 3, "three")], total: 3 })).toEqual({
      "$.a": "Line 1, column 3: one",
      "$.a (2)": "Line 2, column 3: two",
      $: "Line 3, column 3: three",
    });
  });
});

describe("problemText and parseProblemText", () => {
  it("read back the line, column and message they wrote, and leave other messages alone", () => {
    const p = { line: 12, column: 9, message: "Use a colour: #rrggbb.\nSecond line." };
    expect(parseProblemText(problemText(p))).toEqual(p);
    expect(parseProblemText("…and 3 more problems after these.")).toBeNull();
  });
});

describe("import request and names", () => {
  it("defaults to refusing clashes and caps the text length", () => {
    expect(importPresetsBody.parse({ scope: "lab", text: "{}" })).toEqual({ scope: "lab", onClash: "refuse", text: "{}" });
    expect(importPresetsBody.safeParse({ scope: "lab", text: "x".repeat(1_000_001) }).success).toBe(false);
    expect(importPresetsBody.safeParse({ scope: "public", text: "{}" }).success).toBe(false);
  });

  it("names an imported copy '<name> (imported)', then '(imported 2)', within 120 characters", () => {
    expect(importedName("Nuclei", 1)).toBe("Nuclei (imported)");
    expect(importedName("Nuclei", 2)).toBe("Nuclei (imported 2)");
    const long = importedName("L".repeat(120), 12);
    expect(long).toHaveLength(120);
    expect(long.endsWith(" (imported 12)")).toBe(true);
  });
});
