// Regions of interest over HTTP against the real MariaDB: CRUD per role, optimistic versions (409),
// geometry validation with field messages, and datasets of other labs answering 404.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { closeDb } from "@/lib/server/db";
import { writeTiff } from "@/lib/tiff/writer";
import { expectError } from "../helpers/errors";
import { labWithMembers, type LabWithMembers } from "../helpers/http";
import { uploadFile, waitForIngest } from "../helpers/uploads";

afterAll(closeDb);

let lab: LabWithMembers;
let datasetId: number;
const R = () => `/api/datasets/${datasetId}/regions`;

beforeAll(async () => {
  lab = await labWithMembers();
  const planes = [Uint16Array.from({ length: 64 }, (_, i) => i), Uint16Array.from({ length: 64 }, (_, i) => 2 * i)];
  const tiff = await writeTiff(planes, { width: 8, height: 8, bitsPerSample: 16 });
  const done = await uploadFile(lab.editor, lab.labId, tiff, { fileName: "regions.tif", dimensions: { sizeC: 1, sizeZ: 1, sizeT: 2, order: "XYCZT" } });
  datasetId = done.body.datasetId;
  expect((await waitForIngest(lab.editor, datasetId)).dataset.status).toBe("ready");
});

describe("regions of a dataset", () => {
  it("lets an editor draw each kind, and every member list them with their geometry and author", async () => {
    const bodies = [
      { name: "Cell 1", kind: "rect", geometry: { x: 1, y: 1, width: 3, height: 3 } },
      { name: "Nucleus", kind: "ellipse", geometry: { cx: 4, cy: 4, rx: 2, ry: 1.5 }, colour: "#FF00AA" },
      { name: "Outline", kind: "polygon", geometry: { points: [[0, 0], [6, 1], [3, 7]] } },
      { name: "Across", kind: "line", geometry: { x1: 0.5, y1: 0.5, x2: 7.5, y2: 4.5 } },
    ];
    const made: number[] = [];
    for (const body of bodies) {
      const reply = await lab.editor.post(R(), body);
      expect(reply.status, JSON.stringify(reply.body)).toBe(201);
      expect(reply.body.region).toMatchObject({ name: body.name, kind: body.kind, geometry: body.geometry, version: 1, createdBy: lab.editor.name });
      made.push(reply.body.region.id);
    }
    for (const member of [lab.viewer, lab.editor, lab.owner]) {
      const list = await member.get(R());
      expect(list.status).toBe(200);
      const mine = list.body.regions.filter((r: { id: number }) => made.includes(r.id));
      expect(mine.map((r: { name: string }) => r.name)).toEqual(bodies.map((b) => b.name));
      // Colours are stored lower-case; the default outline colour is used when none is given.
      expect(mine[1].colour).toBe("#ff00aa");
      expect(mine[0].colour).toMatch(/^#[0-9a-f]{6}$/);
    }
  });

  it("keeps viewers read-only (403) and other labs out (404, as if the dataset did not exist)", async () => {
    const body = { name: "Nope", kind: "rect", geometry: { x: 0, y: 0, width: 1, height: 1 } };
    expectError(await lab.viewer.post(R(), body), 403, "forbidden");
    expectError(await lab.outsider.get(R()), 404, "not_found");
    expectError(await lab.outsider.post(R(), body), 404, "not_found");
    const id = (await lab.editor.post(R(), { ...body, name: "Target" })).body.region.id;
    expectError(await lab.viewer.patch(`${R()}/${id}`, { version: 1, name: "Mine now" }), 403, "forbidden");
    expectError(await lab.viewer.delete(`${R()}/${id}`), 403, "forbidden");
    expectError(await lab.outsider.patch(`${R()}/${id}`, { version: 1, name: "Mine now" }), 404, "not_found");
    expectError(await lab.outsider.delete(`${R()}/${id}`), 404, "not_found");
    // Unknown region ids are 404 too.
    expectError(await lab.editor.patch(`${R()}/999999999`, { version: 1, name: "x" }), 404, "not_found");
  });

  it("renames and reshapes with the current version, and answers a stale version with 409 and the current region", async () => {
    const id = (await lab.editor.post(R(), { name: "Moving", kind: "rect", geometry: { x: 0, y: 0, width: 2, height: 2 } })).body.region.id;
    const moved = await lab.owner.patch(`${R()}/${id}`, { version: 1, geometry: { x: 3, y: 2, width: 2, height: 4 } });
    expect(moved.status).toBe(200);
    expect(moved.body.region).toMatchObject({ version: 2, geometry: { x: 3, y: 2, width: 2, height: 4 } });
    const stale = await lab.editor.patch(`${R()}/${id}`, { version: 1, name: "Late rename" });
    expect(stale.status).toBe(409);
    expect(stale.body.error.code).toBe("conflict");
    expect(stale.body.current).toMatchObject({ id, version: 2, name: "Moving", geometry: { x: 3, y: 2, width: 2, height: 4 } });
    const renamed = await lab.editor.patch(`${R()}/${id}`, { version: 2, name: "Late rename" });
    expect(renamed.body.region).toMatchObject({ version: 3, name: "Late rename" });
  });

  it("refuses bad geometry with a message per field, and stores nothing", async () => {
    const before = (await lab.editor.get(R())).body.regions.length;
    const cases: [unknown, string][] = [
      [{ name: "Flat", kind: "rect", geometry: { x: 0, y: 0, width: 0, height: 3 } }, "geometry.width"],
      [{ name: "Thin", kind: "ellipse", geometry: { cx: 1, cy: 1, rx: -1, ry: 2 } }, "geometry.rx"],
      [{ name: "Two corners", kind: "polygon", geometry: { points: [[0, 0], [1, 1]] } }, "geometry.points"],
      [{ name: "Dot", kind: "line", geometry: { x1: 1, y1: 1, x2: 1, y2: 1 } }, "geometry.x2"],
      [{ name: "Text", kind: "rect", geometry: { x: "a", y: 0, width: 1, height: 1 } }, "geometry.x"],
      [{ name: "", kind: "rect", geometry: { x: 0, y: 0, width: 1, height: 1 } }, "name"],
      [{ name: "Star", kind: "star", geometry: {} }, "kind"],
    ];
    for (const [body, field] of cases) {
      const reply = await lab.editor.post(R(), body);
      expectError(reply, 400, "invalid_input");
      expect(Object.keys(reply.body.error.fields), JSON.stringify(reply.body)).toContain(field);
    }
    // A PATCH's geometry is checked against the region's own kind.
    const id = (await lab.editor.post(R(), { name: "Kind check", kind: "ellipse", geometry: { cx: 2, cy: 2, rx: 1, ry: 1 } })).body.region.id;
    const wrong = await lab.editor.patch(`${R()}/${id}`, { version: 1, geometry: { x: 0, y: 0, width: 1, height: 1 } });
    expectError(wrong, 400, "invalid_input");
    expect(Object.keys(wrong.body.error.fields).some((k) => k.startsWith("geometry"))).toBe(true);
    expect((await lab.editor.get(R())).body.regions.length).toBe(before + 1);
  });

  it("deletes for editors and owners; a deleted region is gone for everyone", async () => {
    const id = (await lab.editor.post(R(), { name: "Short-lived", kind: "rect", geometry: { x: 0, y: 0, width: 1, height: 1 } })).body.region.id;
    expect((await lab.owner.delete(`${R()}/${id}`)).status).toBe(204);
    expect((await lab.viewer.get(R())).body.regions.some((r: { id: number }) => r.id === id)).toBe(false);
    expectError(await lab.editor.delete(`${R()}/${id}`), 404, "not_found");
  });
});
