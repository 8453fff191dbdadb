// The JSON position scanner: it must accept exactly what JSON.parse accepts (the engine is the judge of
// validity; the scanner only says where), point at the right line and column, and give every value's
// exact span so a schema message can name the line where the value starts.
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { formatPath, lineColumn, MAX_DEPTH, scanJson, type JsonPath } from "@/lib/json-positions";

const accepts = (text: string) => {
  try {
    JSON.parse(text);
    return true;
  } catch {
    return false;
  }
};

const errorAt = (text: string) => {
  const result = scanJson(text);
  if (result.ok) throw new Error(`expected a syntax error in ${JSON.stringify(text)}`);
  return { ...lineColumn(text, result.error.offset), message: result.error.message, offset: result.error.offset };
};

/** Every path of a parsed JSON value, the root first. */
function pathsOf(value: unknown, path: (string | number)[] = []): { path: JsonPath; value: unknown }[] {
  const out: { path: JsonPath; value: unknown }[] = [{ path, value }];
  if (Array.isArray(value)) value.forEach((v, i) => out.push(...pathsOf(v, [...path, i])));
  else if (value && typeof value === "object") for (const [k, v] of Object.entries(value)) out.push(...pathsOf(v, [...path, k]));
  return out;
}

describe("lineColumn", () => {
  it.each([
    ["abc", 0, 1, 1],
    ["abc", 2, 1, 3],
    ["ab\ncd", 3, 2, 1],
    ["ab\ncd", 4, 2, 2],
    // Windows line ends count once; an old Mac \r alone is a line end too (as text editors count them).
    ["a\r\nb", 3, 2, 1],
    // The \n of a \r\n pair sits where the line ends, right after "a".
    ["a\r\nb", 2, 1, 2],
    ["a\rb", 2, 2, 1],
    ["\n\n\nx", 3, 4, 1],
    // A character outside the BMP is two UTF-16 units but one column.
    ["😀x", 2, 1, 2],
    ["é😀é|", 4, 1, 4],
    // Past the end clamps to the end.
    ["ab", 99, 1, 3],
  ])("%j at offset %i is line %i, column %i", (text, offset, line, column) => {
    expect(lineColumn(text, offset)).toEqual({ line, column });
  });
});

describe("scanJson: syntax errors with their line and column", () => {
  // Positions counted by hand from the texts; the message names the slip a person made.
  it.each([
    ["", 1, 1, "The file is empty"],
    ["   \n  ", 1, 1, "The file is empty"],
    ['{\n  "a": 1\n  "b": 2\n}', 3, 3, "is a comma missing before it?"],
    ['{\n  "a": 1,\n}', 2, 9, "Remove this comma: JSON allows no comma before }"],
    ["[1, 2,\n]", 1, 6, "Remove this comma: JSON allows no comma before ]"],
    ['{\n  name: "x"\n}', 2, 3, 'Property names must be in double quotes: write "name"'],
    ["{\n  'name': 1\n}", 2, 3, "not single quotes"],
    ['{\n  "a": \'x\'\n}', 2, 8, "not single quotes"],
    ['{\n  // note\n  "a": 1\n}', 2, 3, "Comments are not allowed"],
    ['{\n  "a": 1 /* x */\n}', 2, 10, "Comments are not allowed"],
    ['{\n  "a": [1, 2\n}', 3, 1, "Expected , or ] after item 2 of the list opened on line 2"],
    ['{\n  "a": [1, 2\n', 3, 1, "The file ends before the [ opened on line 2 is closed with ]"],
    ['{\n  "a": {\n    "b": 1', 3, 11, "The file ends before the { opened on line 2 is closed with }"],
    ['{"a": "unclosed}', 1, 7, "never closed"],
    ['{"a": "two\nlines"}', 1, 11, "A line break inside quotes is not allowed"],
    ['["tab\there"]', 1, 6, "U+0009"],
    ['["\\x41"]', 1, 3, "\\x is not an escape"],
    ['["\\u12G4"]', 1, 3, "four hexadecimal digits"],
    ['{"a" 1}', 1, 6, 'Expected : after the property name "a"'],
    ['{"a": 01}', 1, 8, "may not start with 0"],
    ['{"a": -}', 1, 8, 'Expected a digit after "-"'],
    ['{"a": 1.}', 1, 9, "after the decimal point"],
    ['{"a": 1e}', 1, 9, "in the exponent"],
    ['{"a": .5}', 1, 7, "Expected a value"],
    ['{"a": +1}', 1, 7, "Expected a value"],
    ['{"a": NaN}', 1, 7, '"NaN" is not a JSON value'],
    ['{"a": True}', 1, 7, '"True" is not a JSON value'],
    ['{"a": undefined}', 1, 7, '"undefined" is not a JSON value'],
    ['{"a": nul}', 1, 7, '"nul" is not a JSON value'],
    ['{"a": 1}}', 1, 9, 'Unexpected "}" after the end of the JSON data'],
    ['{"a": 1}\n{"b": 2}', 2, 1, "after the end of the JSON data"],
    ["[,1]", 1, 2, 'Expected a value (a number, text in double quotes, true, false, null, { or [), found ","'],
    ['{"é😀": x}', 1, 8, '"x" is not a JSON value'],
  ])("%j → line %i, column %i", (text, line, column, message) => {
    expect(accepts(text), "JSON.parse agrees the text is broken").toBe(false);
    const at = errorAt(text);
    expect({ line: at.line, column: at.column }).toEqual({ line, column });
    expect(at.message).toContain(message);
  });

  it("points where V8's JSON.parse points whenever V8's message carries a position", () => {
    // V8 (Node 20) is an independent implementation of ECMA-404; where its message says "at position N"
    // for the same slip, the offsets must agree. Unclosed text in quotes is left out on purpose: V8
    // points at the end of the file, the scanner at the opening quote, which is where the fix goes.
    const texts = ["[1 2]", '{"a" 1}', '{"a": 01}', '{"a":1,}', "[1,2", '["a\tb"]', "[1]x", '{"a": 1 "b"}', "[1,,2]", "{,}", '{"a": -x}'];
    let compared = 0;
    for (const text of texts) {
      let v8: number | null = null;
      try {
        JSON.parse(text);
      } catch (error) {
        const m = /at position (\d+)/.exec((error as Error).message);
        v8 = m ? Number(m[1]) : null;
      }
      if (v8 === null) continue;
      compared++;
      const ours = scanJson(text);
      expect(ours.ok).toBe(false);
      if (!ours.ok) expect({ text, offset: ours.error.offset }).toEqual({ text, offset: trailingCommaFix(text, v8) });
    }
    // Guard against a Node upgrade that drops positions from all messages (the test would then check nothing).
    expect(compared).toBeGreaterThanOrEqual(5);
  });

  it("refuses nesting deeper than MAX_DEPTH with a message, though JSON.parse would take it", () => {
    const text = "[".repeat(MAX_DEPTH + 1) + "]".repeat(MAX_DEPTH + 1);
    expect(accepts(text)).toBe(true);
    const at = errorAt(text);
    expect(at.message).toContain(`more than ${MAX_DEPTH} levels`);
    expect(at.offset).toBe(MAX_DEPTH);
    expect(scanJson("[".repeat(MAX_DEPTH) + "]".repeat(MAX_DEPTH)).ok).toBe(true);
  });
});

/**
 * A trailing comma is reported at the comma ("remove this comma"), V8 reports the bracket after it:
 * same slip, neighbouring offsets. Everything else must be the same offset.
 */
function trailingCommaFix(text: string, v8: number): number {
  const before = text.slice(0, v8).trimEnd();
  return (text[v8] === "}" || text[v8] === "]") && before.endsWith(",") ? before.length - 1 : v8;
}

describe("scanJson agrees with JSON.parse", () => {
  const indents = fc.constantFrom<string | number | undefined>(undefined, 0, 2, "\t", " \r\n");

  it("accepts every text JSON.stringify writes, with any indentation", () => {
    fc.assert(
      fc.property(fc.jsonValue({ maxDepth: 4 }), indents, (value, indent) => {
        let text = JSON.stringify(value, null, typeof indent === "string" && indent.includes("\n") ? 1 : indent);
        if (indent === " \r\n") text = text.replace(/\n/g, "\r\n");
        expect(scanJson(text).ok).toBe(true);
      }),
      { numRuns: 400 },
    );
  });

  it("accepts and refuses exactly the texts JSON.parse accepts and refuses, after random one-character edits", () => {
    const pieces = [",", "]", "}", "[", "{", ":", '"', "'", "0", "1", "-", "+", ".", "e", "E", " ", "\n", "\t", "\\", "/", "u", "t", "n", "\u0001", "é", "\ud83d"];
    const edit = fc.record({ at: fc.nat(), kind: fc.constantFrom("insert", "delete", "replace"), piece: fc.constantFrom(...pieces) });
    fc.assert(
      fc.property(fc.jsonValue({ maxDepth: 3 }), fc.array(edit, { minLength: 1, maxLength: 3 }), (value, edits) => {
        let text = JSON.stringify(value, null, 1);
        for (const e of edits) {
          const at = text.length ? e.at % (text.length + 1) : 0;
          if (e.kind === "insert") text = text.slice(0, at) + e.piece + text.slice(at);
          else if (e.kind === "delete") text = text.slice(0, at) + text.slice(at + 1);
          else text = text.slice(0, at) + e.piece + text.slice(at + 1);
        }
        expect({ text, scanner: scanJson(text).ok }).toEqual({ text, scanner: accepts(text) });
      }),
      { numRuns: 3000 },
    );
  });

  it("gives every value a span whose text parses to that value, and every key a span that parses to its name", () => {
    fc.assert(
      fc.property(fc.jsonValue({ maxDepth: 4 }), indents, (value, indent) => {
        const text = JSON.stringify(value, null, typeof indent === "string" && indent.includes("\n") ? 1 : indent);
        const scanned = scanJson(text);
        if (!scanned.ok) throw new Error(scanned.error.message);
        const parsed = JSON.parse(text);
        for (const { path, value: sub } of pathsOf(parsed)) {
          const span = scanned.layout.value(path);
          expect(span, formatPath(path)).toBeDefined();
          expect(JSON.parse(text.slice(span!.start, span!.end))).toEqual(sub);
          const last = path[path.length - 1];
          if (typeof last === "string") expect(JSON.parse(text.slice(scanned.layout.key(path)!.start, scanned.layout.key(path)!.end))).toBe(last);
        }
      }),
      { numRuns: 300 },
    );
  });
});

describe("JsonLayout", () => {
  const text = '{\n  "presets": [\n    { "name": "A", "blend": "add" },\n    { "name": "B" }\n  ]\n}';
  const scanned = scanJson(text);
  if (!scanned.ok) throw new Error("fixture must be valid");
  const { layout } = scanned;

  it("finds a value and its key by a zod-style path", () => {
    expect(lineColumn(text, layout.value(["presets", 1, "name"])!.start)).toEqual({ line: 4, column: 15 });
    expect(lineColumn(text, layout.key(["presets", 0, "blend"])!.start)).toEqual({ line: 3, column: 20 });
    expect(text.slice(layout.value(["presets", 0])!.start, layout.value(["presets", 0])!.end)).toBe('{ "name": "A", "blend": "add" }');
  });

  it("falls back to the deepest existing value for a missing field", () => {
    expect(layout.value(["presets", 1, "blend"])).toBeUndefined();
    const nearest = layout.nearest(["presets", 1, "blend"]);
    expect(nearest.path).toEqual(["presets", 1]);
    expect(lineColumn(text, nearest.span.start)).toEqual({ line: 4, column: 5 });
    expect(layout.nearest(["nothing", 3]).path).toEqual([]);
  });

  it("lists keys that appear twice in one object, at the second one, and maps the path to the last value as JSON.parse does", () => {
    const twice = '{\n  "a": 1,\n  "a": 2\n}';
    const result = scanJson(twice);
    expect(result.ok).toBe(true);
    if (!result.ok) return;
    expect(result.layout.duplicateKeys.map((d) => ({ path: d.path, ...lineColumn(twice, d.key.start) }))).toEqual([{ path: ["a"], line: 3, column: 3 }]);
    const span = result.layout.value(["a"])!;
    expect(twice.slice(span.start, span.end)).toBe(String(JSON.parse(twice).a));
  });

  it("tells an array index from an object key that looks like one", () => {
    const mixed = '{"0": "key", "list": ["index"]}';
    const result = scanJson(mixed);
    if (!result.ok) throw new Error(result.error.message);
    expect(mixed.slice(result.layout.value(["0"])!.start, result.layout.value(["0"])!.end)).toBe('"key"');
    expect(result.layout.value([0])).toBeUndefined();
    expect(mixed.slice(result.layout.value(["list", 0])!.start, result.layout.value(["list", 0])!.end)).toBe('"index"');
    expect(result.layout.value(["list", "0"])).toBeUndefined();
  });
});

describe("formatPath", () => {
  it.each([
    [[], "$"],
    [["presets", 0, "channels", 12, "colour"], "$.presets[0].channels[12].colour"],
    [["a b", "ü", "_ok1"], '$["a b"]["ü"]._ok1'],
  ] as [JsonPath, string][])("%j → %s", (path, expected) => {
    expect(formatPath(path)).toBe(expected);
  });
});
