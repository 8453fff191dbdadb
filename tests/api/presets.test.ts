// Presets over HTTP: who may create, read, change and delete private and lab presets; optimistic
// concurrency on save; duplicate naming; input validation.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { closeDb } from "@/lib/server/db";
import { db } from "../helpers/db";
import { expectError } from "../helpers/errors";
import { anonymous, labWithMembers, type Client, type LabWithMembers } from "../helpers/http";

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
const body = (name: string, scope: "private" | "lab", overrides: Record<string, unknown> = {}) => ({
  name,
  scope,
  blend: "add",
  channels: [channel(0), channel(1, { range: { mode: "percentiles", low: 0.1, high: 99.9 }, clipMarks: { high: "#ff0000", low: "#0000ff" } })],
  ...overrides,
});

let lab: LabWithMembers;
const base = () => `/api/labs/${lab.labId}/presets`;
const create = async (client: Client, name: string, scope: "private" | "lab", overrides: Record<string, unknown> = {}) => {
  const reply = await client.post(base(), body(name, scope, overrides));
  expect(reply.status, JSON.stringify(reply.body)).toBe(201);
  return reply.body.preset as { id: number; version: number; name: string; scope: string; ownerId: number };
};
const rowOf = async (id: number) => db().Preset.findByPk(id, { raw: true });

beforeAll(async () => {
  lab = await labWithMembers();
});

describe("presets: create, list, read", () => {
  it("creates a private preset for every role and returns it with version 1 and the channels as sent", async () => {
    for (const client of [lab.viewer, lab.editor, lab.owner]) {
      const sent = body(`Mine ${client.id}`, "private");
      const reply = await client.post(base(), sent);
      expect(reply.status).toBe(201);
      expect(reply.body.preset).toMatchObject({ labId: lab.labId, ownerId: client.id, name: sent.name, scope: "private", blend: "add", version: 1 });
      expect(reply.body.preset.channels).toEqual(sent.channels);
      const stored = await rowOf(reply.body.preset.id);
      expect(stored).toMatchObject({ ownerId: client.id, scope: "private", version: 1 });
    }
  });

  it("lets editors and owners create lab presets and refuses a viewer with 403, storing nothing", async () => {
    expect((await lab.editor.post(base(), body("Editor lab", "lab"))).status).toBe(201);
    expect((await lab.owner.post(base(), body("Owner lab", "lab"))).status).toBe(201);
    const before = await db().Preset.count({ where: { labId: lab.labId } });
    expectError(await lab.viewer.post(base(), body("Viewer lab", "lab")), 403, "forbidden");
    expect(await db().Preset.count({ where: { labId: lab.labId } })).toBe(before);
  });

  it("lists the caller's private presets and the lab's, never another member's private ones", async () => {
    const mine = await create(lab.viewer, "Viewer only", "private");
    const theirs = await create(lab.editor, "Editor only", "private");
    const shared = await create(lab.editor, "Shared with lab", "lab");
    const names = async (c: Client) => ((await c.get(base())).body.presets as { id: number }[]).map((p) => p.id);
    const forViewer = await names(lab.viewer);
    expect(forViewer).toEqual(expect.arrayContaining([mine.id, shared.id]));
    expect(forViewer).not.toContain(theirs.id);
    const forOwner = await names(lab.owner);
    expect(forOwner).toContain(shared.id);
    expect(forOwner).not.toContain(mine.id);
    expect(forOwner).not.toContain(theirs.id);
  });

  it("answers 404 for another member's private preset on read, change, delete and duplicate, and leaves it alone", async () => {
    const theirs = await create(lab.editor, "Secret mapping", "private");
    const path = `${base()}/${theirs.id}`;
    for (const client of [lab.viewer, lab.owner]) {
      expectError(await client.get(path), 404, "not_found");
      expectError(await client.patch(path, { version: 1, name: "Taken over" }), 404, "not_found");
      expectError(await client.delete(path), 404, "not_found");
      expectError(await client.post(`${path}/duplicate`, {}), 404, "not_found");
    }
    expect(await rowOf(theirs.id)).toMatchObject({ name: "Secret mapping", version: 1 });
  });

  it("hides the lab's presets from a member of another lab and from anonymous callers", async () => {
    const shared = await create(lab.owner, "Lab only", "lab");
    expectError(await lab.outsider.get(`${base()}/${shared.id}`), 404, "not_found");
    expectError(await lab.outsider.get(base()), 404, "not_found");
    expectError(await anonymous().get(base()), 401, "unauthenticated");
  });

  it("reads a lab preset for a viewer, and answers 404 for a preset of the same id under another lab", async () => {
    const shared = await create(lab.owner, "Readable", "lab");
    const read = await lab.viewer.get(`${base()}/${shared.id}`);
    expect(read.status).toBe(200);
    expect(read.body.preset).toMatchObject({ id: shared.id, name: "Readable", scope: "lab" });
    const other = await labWithMembers();
    expectError(await other.owner.get(`/api/labs/${other.labId}/presets/${shared.id}`), 404, "not_found");
  });

  it("refuses a second preset with the same name in the same scope (409, name field) but allows it in another scope", async () => {
    await create(lab.editor, "Duplicate name", "private");
    const again = await lab.editor.post(base(), body("duplicate NAME", "private"));
    expectError(again, 409, "conflict");
    expect(again.body.error.fields).toHaveProperty("name");
    await create(lab.editor, "Duplicate name", "lab");
    // Another member's private preset of the same name is theirs: no clash.
    await create(lab.viewer, "Duplicate name", "private");
  });
});

describe("presets: change and delete", () => {
  it("renames the caller's own private preset for any role and increments the version", async () => {
    for (const client of [lab.viewer, lab.editor, lab.owner]) {
      const p = await create(client, `Rename me ${client.id}`, "private");
      const reply = await client.patch(`${base()}/${p.id}`, { version: 1, name: `Renamed ${client.id}` });
      expect(reply.status).toBe(200);
      expect(reply.body.preset).toMatchObject({ id: p.id, name: `Renamed ${client.id}`, version: 2 });
      expect(await rowOf(p.id)).toMatchObject({ name: `Renamed ${client.id}`, version: 2 });
    }
  });

  it("lets an editor change a lab preset made by the owner, and refuses a viewer with 403 leaving it unchanged", async () => {
    const shared = await create(lab.owner, "Lab mapping", "lab");
    expectError(await lab.viewer.patch(`${base()}/${shared.id}`, { version: 1, name: "Viewer edit" }), 403, "forbidden");
    expect(await rowOf(shared.id)).toMatchObject({ name: "Lab mapping", version: 1 });
    const edited = await lab.editor.patch(`${base()}/${shared.id}`, { version: 1, blend: "max", channels: [channel(0, { gamma: 0.5 })] });
    expect(edited.status).toBe(200);
    expect(edited.body.preset).toMatchObject({ blend: "max", version: 2, name: "Lab mapping" });
    expect(edited.body.preset.channels).toEqual([channel(0, { gamma: 0.5 })]);
  });

  it("answers a stale version with 409 and the current preset, changing nothing", async () => {
    const p = await create(lab.editor, "Contended", "lab");
    const first = await lab.owner.patch(`${base()}/${p.id}`, { version: 1, name: "First save" });
    expect(first.body.preset.version).toBe(2);
    const stored = await rowOf(p.id);

    const stale = await lab.editor.patch(`${base()}/${p.id}`, { version: 1, name: "Late save", blend: "max" });
    expect(stale.status).toBe(409);
    expect(Object.keys(stale.body).sort()).toEqual(["current", "error"]);
    expect(stale.body.error.code).toBe("conflict");
    expect(stale.body.current).toMatchObject({ id: p.id, name: "First save", blend: "add", version: 2 });
    expect(await rowOf(p.id)).toEqual(stored);

    const retried = await lab.editor.patch(`${base()}/${p.id}`, { version: 2, name: "Late save" });
    expect(retried.body.preset).toMatchObject({ name: "Late save", version: 3 });
  });

  it("lets exactly one of four concurrent saves of the same version through", async () => {
    const p = await create(lab.editor, "Race", "private");
    const replies = await Promise.all(
      ["A", "B", "C", "D"].map((tag) => lab.editor.patch(`${base()}/${p.id}`, { version: 1, name: `Race ${tag}` })),
    );
    expect(replies.map((r) => r.status).sort()).toEqual([200, 409, 409, 409]);
    const winner = replies.find((r) => r.status === 200)!.body.preset;
    expect(await rowOf(p.id)).toMatchObject({ name: winner.name, version: 2 });
  });

  it("refuses a rename onto a name already used in the scope with 409 and keeps the old name and version", async () => {
    await create(lab.owner, "Taken", "lab");
    const p = await create(lab.owner, "Free", "lab");
    expectError(await lab.owner.patch(`${base()}/${p.id}`, { version: 1, name: "Taken" }), 409, "conflict");
    expect(await rowOf(p.id)).toMatchObject({ name: "Free", version: 1 });
  });

  it("refuses to change the scope of a preset", async () => {
    const p = await create(lab.editor, "Stays private", "private");
    const reply = await lab.editor.patch(`${base()}/${p.id}`, { version: 1, scope: "lab" });
    expectError(reply, 400, "invalid_input");
    expect(await rowOf(p.id)).toMatchObject({ scope: "private", version: 1 });
  });

  it("deletes the caller's own private preset for any role", async () => {
    for (const client of [lab.viewer, lab.editor, lab.owner]) {
      const p = await create(client, `Delete me ${client.id}`, "private");
      expect((await client.delete(`${base()}/${p.id}`)).status).toBe(204);
      expect(await rowOf(p.id)).toBeNull();
      expectError(await client.get(`${base()}/${p.id}`), 404, "not_found");
    }
  });

  it("deletes a lab preset for an editor and refuses a viewer with 403", async () => {
    const shared = await create(lab.owner, "Doomed", "lab");
    expectError(await lab.viewer.delete(`${base()}/${shared.id}`), 403, "forbidden");
    expect(await rowOf(shared.id)).not.toBeNull();
    expect((await lab.editor.delete(`${base()}/${shared.id}`)).status).toBe(204);
    expect(await rowOf(shared.id)).toBeNull();
  });

  it("answers 404 for an id that is not a plain positive integer", async () => {
    expectError(await lab.owner.get(`${base()}/abc`), 404, "not_found");
    expectError(await lab.owner.get(`${base()}/0`), 404, "not_found");
  });
});

describe("presets: duplicate", () => {
  it("copies into the caller's private presets as '<name> (copy)', then '(copy 2)', '(copy 3)'", async () => {
    const shared = await create(lab.owner, "Nuclei and actin", "lab");
    const path = `${base()}/${shared.id}/duplicate`;
    const names: string[] = [];
    for (let i = 0; i < 3; i++) {
      const reply = await lab.viewer.post(path, {});
      expect(reply.status).toBe(201);
      expect(reply.body.preset).toMatchObject({ scope: "private", ownerId: lab.viewer.id, version: 1, blend: "add" });
      expect(reply.body.preset.channels).toEqual(body("x", "lab").channels);
      names.push(reply.body.preset.name);
    }
    expect(names).toEqual(["Nuclei and actin (copy)", "Nuclei and actin (copy 2)", "Nuclei and actin (copy 3)"]);
    // Another member's copies live in their own private scope and start again at "(copy)".
    expect((await lab.editor.post(path, {})).body.preset.name).toBe("Nuclei and actin (copy)");
  });

  it("keeps a copy of a 120-character name within 120 characters", async () => {
    const long = "L".repeat(120);
    const p = await create(lab.editor, long, "private");
    const reply = await lab.editor.post(`${base()}/${p.id}/duplicate`, {});
    expect(reply.status).toBe(201);
    expect(reply.body.preset.name).toBe(`${"L".repeat(113)} (copy)`);
  });
});

describe("presets: bad input", () => {
  const cases: [string, unknown, string][] = [
    ["a colour that is not #rrggbb", body("Bad colour", "private", { channels: [channel(0, { colour: "green" })] }), "channels.0.colour"],
    ["percentiles with low ≥ high", body("Bad range", "private", { channels: [channel(0, { range: { mode: "percentiles", low: 99, high: 1 } })] }), "channels.0.range.high"],
    ["a black point above the white point", body("Bad counts", "private", { channels: [channel(0, { range: { mode: "counts", black: 500, white: 100 } })] }), "channels.0.range.white"],
    ["17 channels", body("Too many", "private", { channels: Array.from({ length: 17 }, (_, i) => channel(i)) }), "channels"],
    ["no channels", body("Too few", "private", { channels: [] }), "channels"],
    ["a name over 120 characters", body("N".repeat(121), "private"), "name"],
    ["an empty name", body("   ", "private"), "name"],
    ["gamma outside 0.1–5", body("Bad gamma", "private", { channels: [channel(0, { gamma: 7 })] }), "channels.0.gamma"],
    ["an unknown scope", body("Bad scope", "private", { scope: "public" }), "scope"],
    ["an unknown blend", body("Bad blend", "private", { blend: "multiply" }), "blend"],
  ];

  it.each(cases)("refuses %s with 400 naming the field and stores nothing", async (_label, sent, field) => {
    const before = await db().Preset.count({ where: { labId: lab.labId } });
    const reply = await lab.editor.post(base(), sent);
    expectError(reply, 400, "invalid_input");
    expect(reply.body.error.fields).toHaveProperty([field]);
    expect(await db().Preset.count({ where: { labId: lab.labId } })).toBe(before);
  });

  it("refuses malformed JSON with 400 invalid_json", async () => {
    const reply = await lab.editor.raw("POST", base(), { body: "{ not json", headers: { "content-type": "application/json" } });
    expectError(reply, 400, "invalid_json");
    const p = await create(lab.editor, "For bad patch", "private");
    expectError(await lab.editor.raw("PATCH", `${base()}/${p.id}`, { body: "{", headers: { "content-type": "application/json" } }), 400, "invalid_json");
  });

  it("refuses a change without a version with 400", async () => {
    const p = await create(lab.editor, "No version", "private");
    const reply = await lab.editor.patch(`${base()}/${p.id}`, { name: "Whatever" });
    expectError(reply, 400, "invalid_input");
    expect(reply.body.error.fields).toHaveProperty("version");
  });
});
