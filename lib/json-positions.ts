// Where things sit in a JSON text, so a message about a file can name a line and column.
// JSON.parse stays the judge of what is valid JSON; this scanner follows the same grammar
// (ECMA-404 / RFC 8259) only to find positions: the first syntax error (V8's messages do not
// always carry a position, and other engines word them differently), and the start and end of
// every value and object key, addressed by a path in the form zod reports (["presets", 0, "name"]).
// Pure: no DOM, no Node APIs.

export type JsonPath = readonly (string | number)[];

/** UTF-16 offsets into the text; `end` is exclusive. */
export interface Span {
  start: number;
  end: number;
}

/** 1-based; a column counts characters (code points), so an emoji or an accented letter counts once. */
export interface LineColumn {
  line: number;
  column: number;
}

export interface JsonSyntaxProblem {
  message: string;
  offset: number;
}

/** Deeper nesting than this is refused; a presets file needs five levels. Keeps the recursion shallow. */
export const MAX_DEPTH = 256;

const pathKey = (path: JsonPath) => JSON.stringify(path);

/** Positions of the values and keys of one valid JSON text. */
export class JsonLayout {
  constructor(
    private readonly values: Map<string, Span>,
    private readonly keys: Map<string, Span>,
    /** Object keys that appear more than once in the same object (JSON.parse keeps the last). */
    readonly duplicateKeys: readonly { path: JsonPath; key: Span }[],
  ) {}

  /** The span of the value at `path`, or undefined when there is none (e.g. a missing field). */
  value(path: JsonPath): Span | undefined {
    return this.values.get(pathKey(path));
  }

  /** The span of the quoted key that names the member at `path` (the last element must be a string). */
  key(path: JsonPath): Span | undefined {
    return this.keys.get(pathKey(path));
  }

  /** The value at `path`, or else at its longest prefix that exists (the root always does). */
  nearest(path: JsonPath): { path: JsonPath; span: Span } {
    for (let n = path.length; n >= 0; n--) {
      const span = this.values.get(pathKey(path.slice(0, n)));
      if (span) return { path: path.slice(0, n), span };
    }
    return { path: [], span: { start: 0, end: 0 } };
  }
}

class ScanError extends Error {
  constructor(
    message: string,
    readonly offset: number,
  ) {
    super(message);
  }
}

/**
 * Line and column of a UTF-16 offset. Line breaks are \n, \r\n and a lone \r, as text editors count
 * them; an offset past the end is clamped to the end.
 */
export function lineColumn(text: string, offset: number): LineColumn {
  const end = Math.max(0, Math.min(offset, text.length));
  let line = 1;
  let column = 1;
  for (let i = 0; i < end; i++) {
    const c = text.charCodeAt(i);
    if (c === 0x0a || (c === 0x0d && text.charCodeAt(i + 1) !== 0x0a)) {
      line++;
      column = 1;
    } else if (c === 0x0d) {
      // \r of a \r\n pair: the \n that follows ends the line.
    } else if (c >= 0xd800 && c <= 0xdbff && i + 1 < end && (text.charCodeAt(i + 1) & 0xfc00) === 0xdc00) {
      i++; // a surrogate pair is one character
      column++;
    } else {
      column++;
    }
  }
  return { line, column };
}

/** "line 3" of an offset, for messages that point back at an opening bracket. */
const lineOf = (text: string, offset: number) => `line ${lineColumn(text, offset).line}`;

const isDigit = (c: number) => c >= 0x30 && c <= 0x39;
const isWordChar = (c: number) => (c >= 0x41 && c <= 0x5a) || (c >= 0x61 && c <= 0x7a) || isDigit(c) || c === 0x5f || c === 0x24;
const ESCAPES: Record<string, string> = { '"': '"', "\\": "\\", "/": "/", b: "\b", f: "\f", n: "\n", r: "\r", t: "\t" };

/** Scans a JSON text: its layout when it is valid JSON, else the first problem and where it is. */
export function scanJson(text: string): { ok: true; layout: JsonLayout } | { ok: false; error: JsonSyntaxProblem } {
  const n = text.length;
  const values = new Map<string, Span>();
  const keys = new Map<string, Span>();
  const duplicateKeys: { path: JsonPath; key: Span }[] = [];
  /** Open brackets, innermost last, so "the file ends early" can say which one is not closed. */
  const open: { bracket: "{" | "["; offset: number }[] = [];
  let i = 0;

  const fail = (message: string, offset = i): never => {
    throw new ScanError(message, offset);
  };

  /** What is at offset `at`, quoted for a message: a whole word, a character, or the end of the file. */
  const found = (at = i): string => {
    if (at >= n) return "the end of the file";
    let end = at;
    while (end < n && end - at < 24 && isWordChar(text.charCodeAt(end))) end++;
    if (end > at) return `"${text.slice(at, end)}"`;
    const c = text.charCodeAt(at);
    if (c < 0x20 || c === 0x7f) return `the control character U+${c.toString(16).toUpperCase().padStart(4, "0")}`;
    return `"${String.fromCodePoint(text.codePointAt(at)!)}"`;
  };

  const commentHere = () => text[i] === "/" && (text[i + 1] === "/" || text[i + 1] === "*");

  /** After a value, something that could start the next one most likely follows a forgotten comma. */
  const foundOrComma = () => {
    if (commentHere()) fail("Comments are not allowed in JSON.");
    const c = text[i];
    const startsValue = c === '"' || c === "{" || c === "[" || c === "-" || isDigit(text.charCodeAt(i)) || /^(true|false|null)\b/.test(text.slice(i, i + 6));
    return startsValue ? "found the start of another value: is a comma missing before it?" : `found ${found()}.`;
  };

  const endedEarly = (): never => {
    const inner = open[open.length - 1];
    if (!inner) return fail("The file ends where a value was expected.", n);
    const closer = inner.bracket === "{" ? "}" : "]";
    return fail(`The file ends before the ${inner.bracket} opened on ${lineOf(text, inner.offset)} is closed with ${closer}.`, n);
  };

  const skipSpace = () => {
    while (i < n) {
      const c = text.charCodeAt(i);
      if (c === 0x20 || c === 0x09 || c === 0x0a || c === 0x0d) i++;
      else break;
    }
  };

  /** A message for a character that cannot start a value, with the usual hand-editing slips named. */
  const notAValue = (): never => {
    if (i >= n) return endedEarly();
    const c = text[i];
    if (commentHere()) return fail("Comments are not allowed in JSON.");
    if (c === "'") return fail("Text must be in double quotes (\"…\"), not single quotes.");
    if (isWordChar(text.charCodeAt(i))) {
      return fail(`${found()} is not a JSON value: JSON has numbers, text in double quotes, true, false, null, { … } and [ … ].`);
    }
    return fail(`Expected a value (a number, text in double quotes, true, false, null, { or [), found ${found()}.`);
  };

  const readString = (): string => {
    const opening = i;
    i++; // the opening quote
    let out = "";
    let runStart = i;
    while (true) {
      if (i >= n) return fail("The text in quotes that starts here is never closed.", opening);
      const c = text.charCodeAt(i);
      if (c === 0x22) {
        out += text.slice(runStart, i);
        i++;
        return out;
      }
      if (c === 0x0a || c === 0x0d) return fail("A line break inside quotes is not allowed; write \\n, or close the quotes.");
      if (c < 0x20) return fail(`Inside quotes, ${found()} must be written as an escape (such as \\t or \\u0009).`);
      if (c === 0x5c) {
        out += text.slice(runStart, i);
        const e = text[i + 1];
        if (e === undefined) return fail("The text in quotes that starts here is never closed.", opening);
        if (e === "u") {
          const hex = text.slice(i + 2, i + 6);
          if (!/^[0-9a-fA-F]{4}$/.test(hex)) return fail("\\u must be followed by four hexadecimal digits.");
          out += String.fromCharCode(parseInt(hex, 16));
          i += 6;
        } else if (e in ESCAPES) {
          out += ESCAPES[e];
          i += 2;
        } else {
          return fail(`\\${e} is not an escape JSON knows; write \\\\ for a backslash.`);
        }
        runStart = i;
        continue;
      }
      i++;
    }
  };

  const readDigits = (what: string) => {
    if (!isDigit(text.charCodeAt(i))) fail(`Expected a digit ${what}, found ${found()}.`);
    while (isDigit(text.charCodeAt(i))) i++;
  };

  const readNumber = () => {
    if (text[i] === "-") i++; // a value starting with "-" or a digit comes here, so a missing digit follows "-"
    if (text[i] === "0") {
      i++;
      if (isDigit(text.charCodeAt(i))) fail("A number may not start with 0 unless it is 0 or 0.something.");
    } else {
      readDigits('after "-"');
    }
    if (text[i] === ".") {
      i++;
      readDigits("after the decimal point");
    }
    if (text[i] === "e" || text[i] === "E") {
      i++;
      if (text[i] === "+" || text[i] === "-") i++;
      readDigits("in the exponent");
    }
  };

  const readValue = (path: (string | number)[]) => {
    skipSpace();
    if (i >= n) endedEarly();
    const start = i;
    const c = text[i];
    if (c === "{") readObject(path);
    else if (c === "[") readArray(path);
    else if (c === '"') readString();
    else if (c === "-" || isDigit(text.charCodeAt(i))) readNumber();
    else if (text.startsWith("true", i) && !isWordChar(text.charCodeAt(i + 4))) i += 4;
    else if (text.startsWith("false", i) && !isWordChar(text.charCodeAt(i + 5))) i += 5;
    else if (text.startsWith("null", i) && !isWordChar(text.charCodeAt(i + 4))) i += 4;
    else notAValue();
    values.set(pathKey(path), { start, end: i });
  };

  const enter = (bracket: "{" | "[") => {
    if (open.length >= MAX_DEPTH) fail(`Nested more than ${MAX_DEPTH} levels deep.`);
    open.push({ bracket, offset: i });
    i++;
  };

  const readObject = (path: (string | number)[]) => {
    const opened = i;
    enter("{");
    const seen = new Set<string>();
    skipSpace();
    if (text[i] === "}") {
      i++;
      open.pop();
      return;
    }
    let comma = -1;
    while (true) {
      skipSpace();
      if (i >= n) endedEarly();
      if (text[i] !== '"') {
        if (text[i] === "}" && comma >= 0) fail("Remove this comma: JSON allows no comma before }.", comma);
        if (text[i] === "'") fail('Property names must be in double quotes ("name"), not single quotes.');
        if (isWordChar(text.charCodeAt(i))) fail(`Property names must be in double quotes: write "${found().slice(1, -1)}".`);
        if (commentHere()) fail("Comments are not allowed in JSON.");
        fail(`Expected a property name in double quotes, found ${found()}.`);
      }
      const keyStart = i;
      const key = readString();
      const keySpan = { start: keyStart, end: i };
      skipSpace();
      if (i >= n) endedEarly();
      if (text[i] !== ":") fail(`Expected : after the property name "${key}", found ${found()}.`);
      i++;
      const child = [...path, key];
      if (seen.has(key)) duplicateKeys.push({ path: child, key: keySpan });
      seen.add(key);
      keys.set(pathKey(child), keySpan);
      readValue(child);
      skipSpace();
      if (text[i] === ",") {
        comma = i;
        i++;
        continue;
      }
      if (text[i] === "}") {
        i++;
        open.pop();
        return;
      }
      if (i >= n) endedEarly();
      fail(`Expected , or } after the value of "${key}" (in the { opened on ${lineOf(text, opened)}), ${foundOrComma()}`);
    }
  };

  const readArray = (path: (string | number)[]) => {
    const opened = i;
    enter("[");
    skipSpace();
    if (text[i] === "]") {
      i++;
      open.pop();
      return;
    }
    let index = 0;
    let comma = -1;
    while (true) {
      skipSpace();
      if (text[i] === "]" && comma >= 0) fail("Remove this comma: JSON allows no comma before ].", comma);
      readValue([...path, index]);
      index++;
      skipSpace();
      if (text[i] === ",") {
        comma = i;
        i++;
        continue;
      }
      if (text[i] === "]") {
        i++;
        open.pop();
        return;
      }
      if (i >= n) endedEarly();
      fail(`Expected , or ] after item ${index} of the list opened on ${lineOf(text, opened)}, ${foundOrComma()}`);
    }
  };

  try {
    skipSpace();
    if (i >= n) fail("The file is empty: it holds no JSON.", 0);
    readValue([]);
    skipSpace();
    if (i < n) fail(`Unexpected ${found()} after the end of the JSON data (the first value ended before it).`);
    return { ok: true, layout: new JsonLayout(values, keys, duplicateKeys) };
  } catch (error) {
    if (error instanceof ScanError) return { ok: false, error: { message: error.message, offset: error.offset } };
    throw error;
  }
}

/** "$.presets[0].channels[1].colour": a path written as JSONPath (RFC 9535), the way people quote one. */
export function formatPath(path: JsonPath): string {
  let out = "$";
  for (const part of path) {
    if (typeof part === "number") out += `[${part}]`;
    else if (/^[A-Za-z_][A-Za-z0-9_]*$/.test(part)) out += `.${part}`;
    else out += `[${JSON.stringify(part)}]`;
  }
  return out;
}
