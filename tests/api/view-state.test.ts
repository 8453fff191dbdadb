// Per-user view state of a dataset: saved with PUT, restored with GET, never shared with other members.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { writeTiff } from "@/lib/tiff/writer";
import { closeDb } from "@/lib/server/db";
import { db } from "../helpers/db";
import { expectError } from "../helpers/errors";
import { addMember, labWithMembers, type LabWithMembers } from "../helpers/http";
import { uploadFile, waitForIngest } from "../helpers/uploads";

afterAll(closeDb);

let lab: LabWithMembers;
let datasetId: number;
const path = () => `/api/datasets/${datasetId}/view`;

// 2 channels × 3 z-slices × 2 time points.
const view = (overrides: Record<string, unknown> = {}) => ({
  z: 2,
  t: 1,
  zoom: 2.5,
  pan: { x: 12.5, y: 8 },
  blend: "max",
  channels: [
    { c: 0, visible: true, colour: "#00ff00", tableId: null, gamma: 1, black: 12, white: 3900 },
    { c: 1, visible: false, colour: "#ff00ff", tableId: "lumen", gamma: 0.8, black: 0, white: 2048 },
  ],
  correction: { flatId: null, darkId: null, on: false },
  ...overrides,
});

beforeAll(async () => {
  lab = await labWithMembers();
  const plane = (k: number) => Uint16Array.from({ length: 16 * 12 }, (_, i) => (i * 5 + k * 11) % 4096);
  const tiff = await writeTiff(Array.from({ length: 12 }, (_, k) => plane(k)), { width: 16, height: 12, bitsPerSample: 16 });
  const done = await uploadFile(lab.editor, lab.labId, tiff, { fileName: "view.tif", dimensions: { sizeC: 2, sizeZ: 3, sizeT: 2, order: "XYCZT" } });
  datasetId = done.body.datasetId;
  expect((await waitForIngest(lab.editor, datasetId)).dataset.status).toBe("ready");
});

describe("view state", () => {
  it("answers 404 before anything is saved", async () => {
    expectError(await lab.owner.get(path()), 404, "not_found");
  });

  it("restores exactly the view that was saved", async () => {
    const saved = await lab.editor.request("PUT", path(), view());
    expect(saved.status).toBe(200);
    const read = await lab.editor.get(path());
    expect(read.status).toBe(200);
    const { updatedAt, datasetId: id, ...rest } = read.body.view;
    expect(id).toBe(datasetId);
    expect(Number.isNaN(Date.parse(updatedAt))).toBe(false);
    expect(rest).toEqual(view());
  });

  it("replaces the saved view on a second save, keeping one row per person and dataset", async () => {
    await lab.owner.request("PUT", path(), view());
    const second = await lab.owner.request("PUT", path(), view({ z: 0, t: 0, blend: "add" }));
    expect(second.status).toBe(200);
    expect((await lab.owner.get(path())).body.view).toMatchObject({ z: 0, t: 0, blend: "add" });
    expect(await db().ViewState.count({ where: { userId: lab.owner.id, datasetId } })).toBe(1);
  });

  it("lets a viewer save their own view, which another member cannot read (their own GET is 404)", async () => {
    const reply = await lab.viewer.request("PUT", path(), view({ z: 1 }));
    expect(reply.status).toBe(200);
    expect((await lab.viewer.get(path())).body.view.z).toBe(1);
    // A member who has never saved a view of this dataset sees none, not the viewer's.
    const bystander = await addMember(lab.owner, lab.labId, "viewer", "bystander");
    expectError(await bystander.get(path()), 404, "not_found");
    expectError(await lab.outsider.get(path()), 404, "not_found");
  });

  it.each([
    ["a z-slice beyond the stack", view({ z: 3 }), "z"],
    ["a time point beyond the stack", view({ t: 2 }), "t"],
    ["a channel the dataset does not have", view({ channels: [{ c: 2, visible: true, colour: "#00ff00", tableId: null, gamma: 1, black: 0, white: 10 }] }), "channels.0.c"],
    ["a negative z", view({ z: -1 }), "z"],
    ["a black point above the white point", view({ channels: [{ c: 0, visible: true, colour: "#00ff00", tableId: null, gamma: 1, black: 50, white: 10 }] }), "channels.0.white"],
    ["a colour that is not #rrggbb", view({ channels: [{ c: 0, visible: true, colour: "red", tableId: null, gamma: 1, black: 0, white: 10 }] }), "channels.0.colour"],
    ["the same channel twice", view({ channels: [view().channels[0], view().channels[0]] }), "channels"],
  ])("refuses %s with 400 naming the field, keeping the saved view", async (_label, sent, field) => {
    await lab.editor.request("PUT", path(), view());
    const reply = await lab.editor.request("PUT", path(), sent);
    expectError(reply, 400, "invalid_input");
    expect(reply.body.error.fields).toHaveProperty([field]);
    expect((await lab.editor.get(path())).body.view).toMatchObject({ z: 2, t: 1 });
  });

  it("refuses malformed JSON with 400 invalid_json", async () => {
    expectError(await lab.editor.raw("PUT", path(), { body: "{z:1", headers: { "content-type": "application/json" } }), 400, "invalid_json");
  });
});

