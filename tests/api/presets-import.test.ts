// Presets files over HTTP: export of what the caller can see, import per role and scope, bad files
// answered with line-numbered messages and nothing stored, name clashes, a round trip through another
// lab, and the version check on rename still holding for imported presets.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { closeDb } from "@/lib/server/db";
import { db } from "../helpers/db";
import { expectError } from "../helpers/errors";
import { anonymous, labWithMembers, type Client, type LabWithMembers } from "../helpers/http";
import { baseUrl } from "../setup/test-env";

afterAll(closeDb);

const channel = (index: number, overrides: Record<string, unknown> = {}) => ({
  match: { name: `Ch${index}`, emissionNm: 500 + index * 50, index },
  visible: true,
  colour: "#00ff66",
  tableId: null,
  gamma: 1,
  range: { mode: "counts", black: 100, white: 3000 },
  ...overrides,
});
const entry = (name: string, overrides: Record<string, unknown> = {}) => ({
  name,
  blend: "add",
  channels: [channel(0), channel(1, { range: { mode: "percentiles", low: 0.1, high: 99.9 }, clipMarks: { high: "#ff0000", low: "#0000ff" } })],
  ...overrides,
});
/** A presets file as a person would save it: two-space indentation, one field per line. */
const fileText = (...presets: unknown[]) => JSON.stringify({ format: "fluxframe-presets", version: 1, presets }, null, 2);

/** "Line L, column C" (1-based) where `needle` first occurs in `text`, plus `skip` characters. */
function whereIs(text: string, needle: string, skip = 0): string {
  const found = text.indexOf(needle);
  if (found < 0) throw new Error(`${needle} not found`);
  const at = found + skip;
  const lines = text.slice(0, at).split("\n");
  return `Line ${lines.length}, column ${lines[lines.length - 1].length + 1}`;
}

let lab: LabWithMembers;
const base = () => `/api/labs/${lab.labId}/presets`;
const importInto = (client: Client, scope: "private" | "lab", text: string, onClash?: "refuse" | "rename", labId = lab.labId) =>
  client.post(`/api/labs/${labId}/presets/import`, { scope, text, ...(onClash ? { onClash } : {}) });
const count = (labId = lab.labId) => db().Preset.count({ where: { labId } });
const unique = (prefix: string) => `${prefix} ${Math.random().toString(36).slice(2, 8)}`;

beforeAll(async () => {
  lab = await labWithMembers();
});

describe("import per role and scope", () => {
  it("imports into the caller's private presets for every role, each with version 1 and the channels as in the file", async () => {
    for (const client of [lab.viewer, lab.editor, lab.owner]) {
      const names = [unique("Private A"), unique("Private B")];
      const reply = await importInto(client, "private", fileText(entry(names[0]), entry(names[1], { blend: "max", scope: "lab" })));
      expect(reply.status, JSON.stringify(reply.body)).toBe(201);
      expect(reply.body.renamed).toEqual([]);
      expect(reply.body.imported.map((p: { name: string }) => p.name)).toEqual(names);
      for (const p of reply.body.imported) {
        expect(p).toMatchObject({ labId: lab.labId, ownerId: client.id, scope: "private", version: 1 });
        // The scope written in the file is informational: the import's target decides.
        const row = await db().Preset.findByPk(p.id, { raw: true });
        expect(row).toMatchObject({ ownerId: client.id, scope: "private", version: 1, nameScopeKey: client.id });
        expect(row!.channels).toEqual(entry("x").channels);
      }
      // Another member does not see them.
      const other = client === lab.viewer ? lab.editor : lab.viewer;
      const visible = ((await other.get(base())).body.presets as { name: string }[]).map((p) => p.name);
      expect(visible).not.toContain(names[0]);
    }
  });

  it("imports into the lab for editors and owners, and refuses a viewer with 403 storing nothing", async () => {
    for (const client of [lab.editor, lab.owner]) {
      const name = unique("Lab import");
      const reply = await importInto(client, "lab", fileText(entry(name)));
      expect(reply.status, JSON.stringify(reply.body)).toBe(201);
      expect(reply.body.imported[0]).toMatchObject({ name, scope: "lab", ownerId: client.id });
      const seenByViewer = ((await lab.viewer.get(base())).body.presets as { name: string }[]).map((p) => p.name);
      expect(seenByViewer).toContain(name);
    }
    const before = await count();
    expectError(await importInto(lab.viewer, "lab", fileText(entry(unique("Viewer lab")))), 403, "forbidden");
    // Refused before the file is read: a bad file from a viewer into the lab is a 403 too.
    expectError(await importInto(lab.viewer, "lab", "{ broken"), 403, "forbidden");
    expect(await count()).toBe(before);
  });

  it("answers 401 to anonymous callers and 404 to a member of another lab", async () => {
    const before = await count();
    expectError(await importInto(anonymous(), "private", fileText(entry("Nobody"))), 401, "unauthenticated");
    expectError(await importInto(lab.outsider, "private", fileText(entry("Outsider"))), 404, "not_found");
    expect(await count()).toBe(before);
  });
});

describe("a bad file: line-numbered messages, nothing imported", () => {
  it("answers a JSON syntax error with its line and column", async () => {
    const good = fileText(entry(unique("Good one")), entry(unique("Broken one")));
    // Drop the comma after the second preset's "blend" value: the next line starts where it is missing.
    const at = good.lastIndexOf('"blend": "add",') + '"blend": "add"'.length;
    const text = good.slice(0, at) + good.slice(at + 1);
    const before = await count();
    const reply = await importInto(lab.editor, "private", text);
    expectError(reply, 400, "invalid_input");
    expect(reply.body.error.message).toBe("The file has a problem; nothing was imported.");
    const lines = text.split("\n");
    const channelsLine = lines.findIndex((l, i) => i > lines.findIndex((x) => x.includes("Broken one")) && l.includes('"channels"'));
    expect(reply.body.error.fields).toEqual({
      $: `Line ${channelsLine + 1}, column 7: Expected , or } after the value of "blend" (in the { opened on line ${channelsLine - 2}), found the start of another value: is a comma missing before it?`,
    });
    expect(await count()).toBe(before);
  });

  it("answers schema errors with the JSONPath and the line where each value starts, storing not even the good presets", async () => {
    const goodName = unique("Fine preset");
    const text = fileText(
      entry(goodName),
      entry(unique("Bad colour"), { channels: [channel(0, { colour: "green" })] }),
      entry(unique("Bad range"), { blend: "lighten", channels: [channel(0, { range: { mode: "counts", black: 900, white: 10 } })] }),
    );
    const before = await count();
    const reply = await importInto(lab.owner, "lab", text);
    expectError(reply, 400, "invalid_input");
    expect(reply.body.error.message).toBe("The file has 3 problems; nothing was imported.");
    expect(reply.body.error.fields).toEqual({
      "$.presets[1].channels[0].colour": `${whereIs(text, '"green"')}: Use a colour written as #rrggbb.`,
      "$.presets[2].blend": `${whereIs(text, '"lighten"')}: Choose add or max.`,
      "$.presets[2].channels[0].range.white": `${whereIs(text, '"white": 10\n', '"white": '.length)}: The black point must be below the white point.`,
    });
    expect(await count()).toBe(before);
    expect(await db().Preset.count({ where: { labId: lab.labId, name: goodName } })).toBe(0);
  });

  it.each([
    ["another format", JSON.stringify({ format: "colour-table", version: 1, presets: [] }), "$.format", /^Line 1, column 11: This is not a Fluxframe presets file/],
    ["a newer version", JSON.stringify({ format: "fluxframe-presets", version: 3, presets: [entry("Future")] }), "$.version", /^Line 1, column 41: This file uses version 3/],
    ["an empty text", "", "$", /^Line 1, column 1: The file is empty/],
    ["a list instead of an object", "[]", "$", /^Line 1, column 1: A presets file holds one object/],
  ])("refuses %s with 400 and one message", async (_label, text, path, message) => {
    const before = await count();
    const reply = await importInto(lab.editor, "private", text);
    expectError(reply, 400, "invalid_input");
    expect(Object.keys(reply.body.error.fields)).toEqual([path]);
    expect(reply.body.error.fields[path]).toMatch(message);
    expect(await count()).toBe(before);
  });

  it("refuses a request without the text or with an unknown scope, naming the field", async () => {
    const noText = await lab.editor.post(`${base()}/import`, { scope: "private" });
    expectError(noText, 400, "invalid_input");
    expect(noText.body.error.fields).toHaveProperty("text");
    const badScope = await lab.editor.post(`${base()}/import`, { scope: "public", text: fileText(entry("X")) });
    expectError(badScope, 400, "invalid_input");
    expect(badScope.body.error.fields).toHaveProperty("scope");
    const tooLong = await lab.editor.post(`${base()}/import`, { scope: "private", text: " ".repeat(1_000_001) });
    expectError(tooLong, 400, "invalid_input");
    expect(tooLong.body.error.fields).toHaveProperty("text");
  });
});

describe("name clashes", () => {
  it("refuses a file whose names are taken in the target scope with 409, listing each clash at its line, and stores none", async () => {
    const taken = unique("Taken");
    expect((await importInto(lab.editor, "lab", fileText(entry(taken)))).status).toBe(201);
    const fresh = unique("Fresh");
    // Case and accents differ; the database's collation still calls them the same name.
    const clashing = taken.toUpperCase().replace("A", "Á");
    const text = fileText(entry(fresh), entry(clashing));
    const before = await count();
    const reply = await importInto(lab.owner, "lab", text);
    expectError(reply, 409, "conflict");
    expect(reply.body.error.message).toBe("One name is already used in the lab's presets; nothing was imported. Rename it in the file, or import with a new name.");
    expect(reply.body.error.fields).toEqual({
      "$.presets[1].name": `${whereIs(text, JSON.stringify(clashing))}: A preset named "${clashing}" already exists in the lab's presets.`,
    });
    expect(await count()).toBe(before);
    expect(await db().Preset.count({ where: { labId: lab.labId, name: fresh } })).toBe(0);
  });

  it("stores clashing presets as '<name> (imported)', then '(imported 2)', with onClash rename", async () => {
    const name = unique("Twice");
    expect((await importInto(lab.owner, "private", fileText(entry(name)))).status).toBe(201);
    const first = await importInto(lab.owner, "private", fileText(entry(name)), "rename");
    expect(first.status).toBe(201);
    expect(first.body.imported[0].name).toBe(`${name} (imported)`);
    expect(first.body.renamed).toEqual([{ from: name, to: `${name} (imported)` }]);
    const second = await importInto(lab.owner, "private", fileText(entry(name)), "rename");
    expect(second.body.imported[0].name).toBe(`${name} (imported 2)`);
    expect(await db().Preset.count({ where: { labId: lab.labId, ownerId: lab.owner.id, scope: "private" } })).toBeGreaterThanOrEqual(3);
  });

  it("does not count another member's private preset, or a lab preset, as a clash for a private import", async () => {
    const name = unique("Shared name");
    expect((await importInto(lab.editor, "private", fileText(entry(name)))).status).toBe(201);
    expect((await importInto(lab.owner, "lab", fileText(entry(name)))).status).toBe(201);
    const mine = await importInto(lab.viewer, "private", fileText(entry(name)));
    expect(mine.status).toBe(201);
    expect(mine.body.imported[0].name).toBe(name);
  });

  it("refuses two presets with the same name in one file at the second one's line", async () => {
    const name = unique("Same");
    const text = fileText(entry(name), entry(name.toLowerCase()));
    const reply = await importInto(lab.editor, "private", text);
    expectError(reply, 400, "invalid_input");
    const second = text.lastIndexOf(JSON.stringify(name.toLowerCase()));
    expect(reply.body.error.fields["$.presets[1].name"]).toMatch(new RegExp(`^Line ${text.slice(0, second).split("\n").length}, column 15: The name`));
  });
});

describe("export", () => {
  it("sends the caller's private presets and the lab's, never another member's, as a downloadable presets file", async () => {
    const own = unique("Export own");
    const shared = unique("Export shared");
    const theirs = unique("Export theirs");
    await importInto(lab.viewer, "private", fileText(entry(own)));
    await importInto(lab.owner, "lab", fileText(entry(shared, { blend: "max" })));
    await importInto(lab.editor, "private", fileText(entry(theirs)));

    const reply = await lab.viewer.raw("GET", `${base()}/export`);
    expect(reply.status).toBe(200);
    expect(reply.headers.get("content-type")).toBe("application/json; charset=utf-8");
    expect(reply.headers.get("content-disposition")).toMatch(new RegExp(`^attachment; filename="fluxframe-presets-lab${lab.labId}-\\d{4}-\\d{2}-\\d{2}\\.json"$`));
    const file = reply.body;
    expect(file).toMatchObject({ format: "fluxframe-presets", version: 1 });
    expect(Date.parse(file.exportedAt)).toBeGreaterThan(Date.now() - 60_000);
    const names = file.presets.map((p: { name: string }) => p.name);
    expect(names).toContain(own);
    expect(names).toContain(shared);
    expect(names).not.toContain(theirs);
    expect(file.presets.find((p: { name: string }) => p.name === shared)).toEqual({ ...entry(shared, { blend: "max" }), scope: "lab" });
    // Only the portable part: no ids, owners, versions or dates per preset.
    for (const p of file.presets) expect(Object.keys(p).sort()).toEqual(["blend", "channels", "name", "scope"]);
    // Written with two-space indentation, one field per line, so line numbers in import messages are useful.
    const text = await (await fetch(`${baseUrl}${base()}/export`, { headers: { cookie: lab.viewer.cookieHeader() } })).text();
    expect(text).toBe(`${JSON.stringify(JSON.parse(text), null, 2)}\n`);
  });

  it("exports only the listed ids, refuses one the caller cannot see with 404, and a malformed list with 400", async () => {
    const a = (await importInto(lab.editor, "private", fileText(entry(unique("Pick A"))))).body.imported[0];
    const b = (await importInto(lab.editor, "lab", fileText(entry(unique("Pick B"))))).body.imported[0];
    await importInto(lab.editor, "private", fileText(entry(unique("Not picked"))));
    const picked = await lab.editor.get(`${base()}/export?ids=${b.id},${a.id}`);
    expect(picked.status).toBe(200);
    expect(picked.body.presets.map((p: { name: string }) => p.name).sort()).toEqual([a.name, b.name].sort());
    // The viewer sees the lab preset but not the editor's private one: the whole export is refused.
    expectError(await lab.viewer.get(`${base()}/export?ids=${b.id},${a.id}`), 404, "not_found");
    expect((await lab.viewer.get(`${base()}/export?ids=${b.id}`)).status).toBe(200);
    expectError(await lab.editor.get(`${base()}/export?ids=1;2`), 400, "invalid_input");
    expectError(await lab.editor.get(`${base()}/export?ids=`), 400, "invalid_input");
  });
});

describe("round trip and versions", () => {
  it("exports, imports into another lab and exports again to the same presets", async () => {
    const names = [unique("Trip A"), unique("Trip B")];
    await importInto(lab.owner, "lab", fileText(entry(names[0], { channels: [channel(0, { gamma: 0.45, tableId: "viridis" })] }), entry(names[1], { blend: "max" })));
    const ids = ((await lab.owner.get(base())).body.presets as { id: number; name: string }[]).filter((p) => names.includes(p.name)).map((p) => p.id);
    const first = await lab.owner.raw("GET", `${base()}/export?ids=${ids.join(",")}`);
    const firstText = JSON.stringify(first.body, null, 2);

    const other = await labWithMembers();
    const imported = await importInto(other.owner, "lab", firstText, undefined, other.labId);
    expect(imported.status, JSON.stringify(imported.body)).toBe(201);
    const second = await other.owner.get(`/api/labs/${other.labId}/presets/export`);
    expect(second.body.presets).toEqual(first.body.presets);
    expect(second.body.presets.map((p: { name: string }) => p.name).sort()).toEqual([...names].sort());
  });

  it("keeps optimistic concurrency for an imported preset: a stale rename gets 409 with the current one", async () => {
    const [p] = (await importInto(lab.editor, "lab", fileText(entry(unique("Contended import"))))).body.imported;
    const first = await lab.owner.patch(`${base()}/${p.id}`, { version: 1, name: unique("Owner's name") });
    expect(first.status).toBe(200);
    const stale = await lab.editor.patch(`${base()}/${p.id}`, { version: 1, name: unique("Editor's name") });
    expect(stale.status).toBe(409);
    expect(stale.body.error.code).toBe("conflict");
    expect(stale.body.current).toMatchObject({ id: p.id, name: first.body.preset.name, version: 2 });
    expect(await db().Preset.findByPk(p.id, { raw: true })).toMatchObject({ name: first.body.preset.name, version: 2 });
  });
});
