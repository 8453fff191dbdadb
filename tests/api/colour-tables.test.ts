// Colour tables over HTTP: who may create, read, change and delete private, lab and public tables;
// optimistic concurrency; import of CSV and JSON files (a bad file stores nothing and names its
// lines); export and a byte-for-byte round trip; audit entries.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { closeDb } from "@/lib/server/db";
import { buildTableFromStops, rgbToHexString, tableToCsv } from "@/lib/imaging/table-editor";
import { findTable } from "@/lib/imaging/colour-tables";
import { db } from "../helpers/db";
import { expectError } from "../helpers/errors";
import { anonymous, labWithMembers, type Client, type LabWithMembers } from "../helpers/http";

afterAll(closeDb);

type Scope = "private" | "lab" | "public";
const stops = [
  { position: 1, colour: "#F1E6A0" },
  { position: 0, colour: "#0d1b4c" },
  { position: 0.5, colour: "#3f8f8a" },
];
const body = (name: string, scope: Scope, overrides: Record<string, unknown> = {}) => ({ name, scope, space: "oklab", stops, ...overrides });
const unique = (prefix: string) => `${prefix} ${Math.random().toString(36).slice(2, 8)}`;

let lab: LabWithMembers;
/** A second lab: its owner is the `outsider` of the first. */
let otherLabId: number;
const base = (labId = lab.labId) => `/api/labs/${labId}/colour-tables`;
const create = async (client: Client, name: string, scope: Scope, labId = lab.labId) => {
  const reply = await client.post(base(labId), body(name, scope));
  expect(reply.status, JSON.stringify(reply.body)).toBe(201);
  return reply.body.table as { id: number; version: number; name: string; scope: Scope; ownerId: number; rgb: string; canEdit: boolean };
};
const rowOf = (id: number) => db().ColourTable.findByPk(id);
const countIn = (labId: number) => db().ColourTable.count({ where: { labId } });
const greyCsv = () => tableToCsv(findTable("grey")!.rgb);

beforeAll(async () => {
  lab = await labWithMembers();
  otherLabId = (await lab.outsider.get("/api/labs")).body.labs[0].id;
});

describe("colour tables: create and read", () => {
  it("creates a private table for every role, computing the 256 entries on the server from the stops", async () => {
    const expected = rgbToHexString(buildTableFromStops(stops, "oklab").rgb);
    for (const client of [lab.viewer, lab.editor, lab.owner]) {
      const reply = await client.post(base(), body(`Mine ${client.id}`, "private"));
      expect(reply.status, JSON.stringify(reply.body)).toBe(201);
      const t = reply.body.table;
      expect(t).toMatchObject({ labId: lab.labId, ownerId: client.id, ownerName: client.name, scope: "private", space: "oklab", version: 1, canEdit: true });
      expect(t.rgb).toBe(expected);
      // Stored sorted by position, colours in lower case.
      expect(t.stops.map((s: { position: number }) => s.position)).toEqual([0, 0.5, 1]);
      expect(t.stops[2].colour).toBe("#f1e6a0");
      const row = await rowOf(t.id);
      expect(Buffer.from(row!.rgb).toString("hex")).toBe(expected);
    }
  });

  it("refuses entries sent by the client: only stops make a table", async () => {
    const reply = await lab.editor.post(base(), { ...body(unique("Sneaky"), "private"), rgb: "00".repeat(768) });
    expectError(reply, 400, "invalid_input");
  });

  it("lets editors and owners create lab and public tables and refuses a viewer with 403, storing nothing", async () => {
    for (const scope of ["lab", "public"] as const) {
      expect((await lab.editor.post(base(), body(unique(`Editor ${scope}`), scope))).status).toBe(201);
      expect((await lab.owner.post(base(), body(unique(`Owner ${scope}`), scope))).status).toBe(201);
      const before = await countIn(lab.labId);
      expectError(await lab.viewer.post(base(), body(unique(`Viewer ${scope}`), scope)), 403, "forbidden");
      expect(await countIn(lab.labId)).toBe(before);
    }
  });

  it("lists this lab's shared tables, the caller's private ones and public tables of any lab, never another person's private one", async () => {
    const mine = await create(lab.viewer, unique("Viewer only"), "private");
    const theirs = await create(lab.editor, unique("Editor only"), "private");
    const shared = await create(lab.editor, unique("Shared"), "lab");
    const open = await create(lab.editor, unique("Open to all"), "public");
    const ids = async (c: Client, labId = lab.labId) => ((await c.get(base(labId))).body.tables as { id: number }[]).map((t) => t.id);
    const forViewer = await ids(lab.viewer);
    expect(forViewer).toEqual(expect.arrayContaining([mine.id, shared.id, open.id]));
    expect(forViewer).not.toContain(theirs.id);
    // A member of another lab sees the public table in their own lab's list, and nothing else of ours.
    const forOutsider = await ids(lab.outsider, otherLabId);
    expect(forOutsider).toContain(open.id);
    expect(forOutsider).not.toContain(shared.id);
    expect(forOutsider).not.toContain(mine.id);
    const listed = ((await lab.outsider.get(base(otherLabId))).body.tables as { id: number; labName: string; canEdit: boolean }[]).find((t) => t.id === open.id)!;
    expect(listed.canEdit).toBe(false);
    expect(listed.labName).not.toBe("");
  });

  it("lets a member of another lab read and export a public table, but not change or delete it (403, unchanged)", async () => {
    const open = await create(lab.owner, unique("Public read-only"), "public");
    const path = `${base(otherLabId)}/${open.id}`;
    const got = await lab.outsider.get(path);
    expect(got.status).toBe(200);
    expect(got.body.table).toMatchObject({ id: open.id, canEdit: false, rgb: open.rgb });
    const exported = await lab.outsider.get(`${path}/export?format=csv`);
    expect(exported.status).toBe(200);
    expectError(await lab.outsider.patch(path, { version: 1, name: "Hijacked" }), 403, "forbidden");
    expectError(await lab.outsider.delete(path), 403, "forbidden");
    const row = await rowOf(open.id);
    expect(row).toMatchObject({ name: open.name, version: 1 });
    // Through our lab's address the outsider is not a member at all: 404, as for any lab route.
    expectError(await lab.outsider.get(`${base()}/${open.id}`), 404, "not_found");
  });

  it("answers 404 for another member's private table on read, change, delete and export, and leaves it alone", async () => {
    const theirs = await create(lab.editor, unique("Secret ramp"), "private");
    const path = `${base()}/${theirs.id}`;
    for (const client of [lab.viewer, lab.owner]) {
      expectError(await client.get(path), 404, "not_found");
      expectError(await client.patch(path, { version: 1, name: "Taken" }), 404, "not_found");
      expectError(await client.delete(path), 404, "not_found");
      expectError(await client.get(`${path}/export`), 404, "not_found");
    }
    expect(await rowOf(theirs.id)).toMatchObject({ name: theirs.name, version: 1 });
  });

  it("refuses anonymous callers with 401 and unknown or malformed ids with 404", async () => {
    expectError(await anonymous().get(base()), 401, "unauthenticated");
    expectError(await lab.viewer.get(`${base()}/4294967295`), 404, "not_found");
    expectError(await lab.viewer.get(`${base()}/abc`), 404, "not_found");
  });

  it("rejects stops without an entry at 0 and 1, colours that are not #rrggbb, and an unknown space", async () => {
    const bad = [
      body(unique("No ends"), "private", { stops: [{ position: 0.2, colour: "#000000" }, { position: 0.8, colour: "#ffffff" }] }),
      body(unique("Bad colour"), "private", { stops: [{ position: 0, colour: "black" }, { position: 1, colour: "#ffffff" }] }),
      body(unique("Bad space"), "private", { space: "hsl" }),
      body(unique("One stop"), "private", { stops: [{ position: 0, colour: "#000000" }] }),
    ];
    for (const b of bad) expectError(await lab.editor.post(base(), b), 400, "invalid_input");
  });
});

describe("colour tables: change and delete", () => {
  it("lets editors and owners rename a lab table; a viewer gets 403 and nothing changes", async () => {
    const shared = await create(lab.owner, unique("Lab ramp"), "lab");
    const path = `${base()}/${shared.id}`;
    expectError(await lab.viewer.patch(path, { version: 1, name: "Viewer rename" }), 403, "forbidden");
    expect(await rowOf(shared.id)).toMatchObject({ name: shared.name, version: 1 });
    const renamed = await lab.editor.patch(path, { version: 1, name: `${shared.name} v2` });
    expect(renamed.status).toBe(200);
    expect(renamed.body.table).toMatchObject({ name: `${shared.name} v2`, version: 2, rgb: shared.rgb });
  });

  it("answers a stale version with 409 and the current table, and keeps the newer save", async () => {
    const mine = await create(lab.editor, unique("Contested"), "private");
    const path = `${base()}/${mine.id}`;
    const first = await lab.editor.patch(path, { version: 1, name: `${mine.name} A` });
    expect(first.status).toBe(200);
    const stale = await lab.editor.patch(path, { version: 1, name: `${mine.name} B` });
    expect(stale.status).toBe(409);
    expect(stale.body.error.code).toBe("conflict");
    expect(stale.body.current).toMatchObject({ id: mine.id, version: 2, name: `${mine.name} A` });
    expect(await rowOf(mine.id)).toMatchObject({ name: `${mine.name} A`, version: 2 });
  });

  it("replaces the entries when new stops are saved, and refuses stops without their space", async () => {
    const mine = await create(lab.editor, unique("Restyled"), "private");
    const path = `${base()}/${mine.id}`;
    const newStops = [
      { position: 0, colour: "#000000" },
      { position: 1, colour: "#ffffff" },
    ];
    expectError(await lab.editor.patch(path, { version: 1, stops: newStops }), 400, "invalid_input");
    const saved = await lab.editor.patch(path, { version: 1, space: "cielab", stops: newStops });
    expect(saved.status).toBe(200);
    expect(saved.body.table).toMatchObject({ space: "cielab", version: 2 });
    expect(saved.body.table.rgb).toBe(rgbToHexString(buildTableFromStops(newStops, "cielab").rgb));
  });

  it("keeps names unique among the lab's shared tables (lab and public together) and per person among private ones", async () => {
    const name = unique("Twin");
    await create(lab.editor, name, "lab");
    const clash = await lab.owner.post(base(), body(name, "public"));
    expectError(clash, 409, "conflict");
    expect(clash.body.error.fields).toEqual({ name: "That name is already taken." });
    // Private names are per person: the same name is fine for two people, and beside a lab table.
    await create(lab.viewer, name, "private");
    await create(lab.editor, name, "private");
    expectError(await lab.viewer.post(base(), body(name.toUpperCase(), "private")), 409, "conflict");
  });

  it("deletes what the caller may change, writes audit entries for create and delete, and refuses a viewer on a lab table", async () => {
    const shared = await create(lab.editor, unique("Short-lived"), "lab");
    const path = `${base()}/${shared.id}`;
    expectError(await lab.viewer.delete(path), 403, "forbidden");
    expect((await lab.owner.delete(path)).status).toBe(204);
    expectError(await lab.editor.get(path), 404, "not_found");
    expect(await rowOf(shared.id)).toBeNull();
    const events = await db().AuditEvent.findAll({ where: { labId: lab.labId, target: `colour-table:${shared.id}` }, order: [["id", "ASC"]], raw: true });
    expect(events.map((e) => [e.action, e.actorId])).toEqual([
      ["colour_table.created", lab.editor.id],
      ["colour_table.deleted", lab.owner.id],
    ]);
    expect(events[0].detail).toMatchObject({ name: shared.name, scope: "lab", via: "editor" });
  });
});

describe("colour tables: import and export", () => {
  const importPath = () => `${base()}/import`;

  it("imports a CSV table and exports it byte for byte, with a download name", async () => {
    // An arbitrary table with no stops behind it.
    const rgb = Uint8Array.from({ length: 768 }, (_, k) => (k * 37 + (k >> 3)) % 256);
    const csv = tableToCsv(rgb);
    const name = unique("Imported ramp");
    const reply = await lab.editor.post(importPath(), { format: "csv", content: csv, name, scope: "lab" });
    expect(reply.status, JSON.stringify(reply.body)).toBe(201);
    expect(reply.body.table).toMatchObject({ name, scope: "lab", space: null, stops: null, rgb: rgbToHexString(rgb) });
    const exported = await lab.viewer.raw("GET", `${base()}/${reply.body.table.id}/export?format=csv`);
    expect(exported.status).toBe(200);
    expect(exported.headers.get("content-type")).toBe("text/csv; charset=utf-8");
    expect(exported.headers.get("content-disposition")).toMatch(/^attachment; filename="Imported-ramp-[a-z0-9]+\.csv"$/);
    expect(Buffer.from(exported.body as string, "utf8").equals(Buffer.from(csv, "utf8"))).toBe(true);
    const event = await db().AuditEvent.findOne({ where: { target: `colour-table:${reply.body.table.id}` }, raw: true });
    expect(event).toMatchObject({ action: "colour_table.created", detail: { via: "csv" } });
  });

  it("refuses a bad CSV with 400, every problem keyed by its line, and stores nothing", async () => {
    const lines = greyCsv().split("\n");
    lines[6] = "5,10,20"; // line 7: a column missing
    lines[41] = "40,300,0,0"; // line 42: out of range
    const before = await countIn(lab.labId);
    const reply = await lab.editor.post(importPath(), { format: "csv", content: lines.join("\n"), name: unique("Broken"), scope: "private" });
    expectError(reply, 400, "invalid_input");
    expect(reply.body.error.message).toBe("The CSV file has 2 problems; nothing was imported.");
    expect(reply.body.error.fields).toEqual({
      "line 7": "Expected 4 values (index,r,g,b), found 3.",
      "line 42": 'r "300" is not a whole number from 0 to 255.',
    });
    expect(await countIn(lab.labId)).toBe(before);
  });

  it("asks for a name for a CSV file, and refuses a viewer importing into the lab before reading the file", async () => {
    expectError(await lab.editor.post(importPath(), { format: "csv", content: greyCsv(), scope: "private" }), 400, "invalid_input");
    expectError(await lab.viewer.post(importPath(), { format: "csv", content: "not even csv", name: unique("Nope"), scope: "lab" }), 403, "forbidden");
  });

  it("round-trips through JSON: export, import under a new name, same entries and stops", async () => {
    const made = await create(lab.editor, unique("Travelling"), "private");
    const json = await lab.editor.raw("GET", `${base()}/${made.id}/export?format=json`);
    expect(json.status).toBe(200);
    expect(json.headers.get("content-type")).toBe("application/json; charset=utf-8");
    expect(json.body).toMatchObject({ format: "fluxframe-colour-table", version: 1, name: made.name, space: "oklab" });
    const text = JSON.stringify(json.body, null, 2);
    const again = await lab.owner.post(importPath(), { format: "json", content: text, scope: "private" });
    expect(again.status, JSON.stringify(again.body)).toBe(201);
    expect(again.body.table).toMatchObject({ name: made.name, rgb: made.rgb, space: "oklab", ownerId: lab.owner.id });
    expect(again.body.table.stops).toEqual(json.body.stops);
  });

  it("refuses a bad JSON file with line numbers and stores nothing", async () => {
    const made = await create(lab.editor, unique("To break"), "private");
    const doc = (await lab.editor.get(`${base()}/${made.id}/export?format=json`)).body;
    doc.entries[3] = "#zzzzzz";
    const text = JSON.stringify(doc, null, 2);
    const line = text.split("\n").findIndex((l) => l.includes("#zzzzzz")) + 1;
    const before = await countIn(lab.labId);
    const reply = await lab.editor.post(importPath(), { format: "json", content: text, name: unique("Broken JSON"), scope: "private" });
    expectError(reply, 400, "invalid_input");
    expect(Object.keys(reply.body.error.fields)).toEqual([`line ${line}`]);
    expect(reply.body.error.fields[`line ${line}`]).toContain("entries.3");
    const syntax = await lab.editor.post(importPath(), { format: "json", content: '{\n  "format": "fluxframe-colour-table",\n  oops\n}', name: unique("Syntax"), scope: "private" });
    expectError(syntax, 400, "invalid_input");
    expect(Object.keys(syntax.body.error.fields)).toEqual(["line 3"]);
    expect(await countIn(lab.labId)).toBe(before);
  });

  it("rejects an unknown export format with 400", async () => {
    const made = await create(lab.editor, unique("Format"), "private");
    expectError(await lab.editor.get(`${base()}/${made.id}/export?format=xml`), 400, "invalid_input");
  });
});
