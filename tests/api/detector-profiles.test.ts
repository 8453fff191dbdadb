// Detector profiles over HTTP: who may create, read, change and delete them; the gain typed in
// either unit and stored as K in DN/e⁻; optimistic concurrency; the photon-transfer endpoint on a
// synthetic series uploaded here (known camera: it must recover the gain); bad layouts refused with
// the reason; a dataset naming its profile, and the dataset JSON carrying the profile's numbers.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { photonTransferFromFrames } from "@/lib/imaging/photon-transfer";
import { DEMO_CAMERA, type CameraModel } from "@/lib/imaging/synthetic";
import { closeDb } from "@/lib/server/db";
import { writeTiff } from "@/lib/tiff/writer";
import { db } from "../helpers/db";
import { expectError } from "../helpers/errors";
import { anonymous, labWithMembers, type Client, type LabWithMembers } from "../helpers/http";
import { photonTransferTiff, SERIES_FRACTIONS, type SeriesFile } from "../helpers/photon-transfer";
import { uploadFile, waitForIngest } from "../helpers/uploads";

afterAll(closeDb);

let lab: LabWithMembers;
let otherLabId: number;
const base = (labId = lab.labId) => `/api/labs/${labId}/detector-profiles`;
const unique = (prefix: string) => `${prefix} ${Math.random().toString(36).slice(2, 8)}`;
const typed = (name: string, overrides: Record<string, unknown> = {}) => ({ name, bitDepth: 12, offsetDn: 100, gain: { value: 0.5, unit: "dn_per_e" }, readNoiseE: 2.2, saturationCapacityE: 7990, ...overrides });
const create = async (client: Client, body: Record<string, unknown>, labId = lab.labId) => {
  const reply = await client.post(base(labId), body);
  expect(reply.status, JSON.stringify(reply.body)).toBe(201);
  return reply.body.profile;
};
const countIn = (labId: number) => db().DetectorProfile.count({ where: { labId } });

async function upload(client: Client, bytes: Uint8Array, dimensions: Record<string, unknown>, fileName = "series.tif"): Promise<number> {
  const reply = await uploadFile(client, lab.labId, bytes, { fileName, dimensions, partSize: 1024 * 1024 });
  expect(reply.status, JSON.stringify(reply.body)).toBe(201);
  const id = reply.body.datasetId as number;
  expect((await waitForIngest(client, id)).dataset.status).toBe("ready");
  return id;
}

let series: SeriesFile;
let seriesId: number;

beforeAll(async () => {
  lab = await labWithMembers();
  otherLabId = (await lab.outsider.get("/api/labs")).body.labs[0].id;
  series = await photonTransferTiff({ side: 128, seed: 31 });
  seriesId = await upload(lab.editor, series.bytes, series.dimensions);
});

describe("detector profiles: create and read", () => {
  it("lets editors and owners create profiles and refuses viewers, storing nothing for them", async () => {
    const before = await countIn(lab.labId);
    expectError(await lab.viewer.post(base(), typed(unique("Viewer cam"))), 403, "forbidden");
    expect(await countIn(lab.labId)).toBe(before);
    for (const client of [lab.editor, lab.owner]) {
      const p = await create(client, typed(unique(`Cam ${client.id}`)));
      expect(p).toMatchObject({ labId: lab.labId, bitDepth: 12, ceiling: 4095, offsetDn: 100, gainDnPerE: 0.5, gainEPerDn: 2, readNoiseE: 2.2, saturationCapacityE: 7990, source: "manual", version: 1, createdBy: client.name, datasetCount: 0, fit: null });
    }
    expect(await countIn(lab.labId)).toBe(before + 2);
    expectError(await anonymous().post(base(), typed(unique("Anon"))), 401, "unauthenticated");
    expectError(await lab.outsider.post(base(), typed(unique("Outsider"))), 404, "not_found");
  });

  it("takes the gain in e⁻/DN (as data sheets quote it) and stores K in DN/e⁻ (EMVA 1288)", async () => {
    // 4 e⁻/DN is K = 1/4 = 0.25 DN/e⁻.
    const p = await create(lab.editor, typed(unique("Sheet"), { gain: { value: 4, unit: "e_per_dn" } }));
    expect(p.gainDnPerE).toBe(0.25);
    expect(p.gainEPerDn).toBe(4);
    const row = await db().DetectorProfile.findByPk(p.id);
    expect(row!.gainDnPerE).toBe(0.25);
    // 3 e⁻/DN is not a round number in DN/e⁻: stored as 1/3 and read back as 3.
    const q = await create(lab.editor, typed(unique("Third"), { gain: { value: 3, unit: "e_per_dn" } }));
    expect(q.gainDnPerE).toBeCloseTo(1 / 3, 14);
    expect(q.gainEPerDn).toBeCloseTo(3, 12);
  });

  it("lists the lab's profiles for every member, and only the lab's", async () => {
    const mine = await create(lab.owner, typed(unique("Listed")));
    const theirs = await create(lab.outsider, typed(unique("Elsewhere")), otherLabId);
    for (const client of [lab.viewer, lab.editor, lab.owner]) {
      const reply = await client.get(base());
      expect(reply.status).toBe(200);
      const ids = reply.body.profiles.map((p: { id: number }) => p.id);
      expect(ids).toContain(mine.id);
      expect(ids).not.toContain(theirs.id);
    }
    expect((await lab.viewer.get(`${base()}/${mine.id}`)).body.profile.name).toBe(mine.name);
    // Another lab's profile through this lab's address is unknown here.
    expectError(await lab.owner.get(`${base()}/${theirs.id}`), 404, "not_found");
    expectError(await lab.owner.get(`${base()}/abc`), 404, "not_found");
  });

  it("refuses a name already used in the lab, whatever its letter case", async () => {
    const name = unique("Dup");
    await create(lab.editor, typed(name));
    const reply = await lab.owner.post(base(), typed(name.toUpperCase()));
    expectError(reply, 409, "conflict");
    expect(reply.body.error.fields.name).toBe("That name is already taken.");
    // The same name in another lab is fine.
    await create(lab.outsider, typed(name), otherLabId);
  });

  it.each([
    [{ gain: { value: 0, unit: "dn_per_e" } }, "gain.value", "The gain must be above 0."],
    [{ gain: { value: 2 } }, "gain.unit", "Say whether the gain is in DN/e⁻ or e⁻/DN."],
    [{ gain: 0.5 }, "gain", null],
    [{ bitDepth: 17 }, "bitDepth", "Fluxframe reads up to 16 bits."],
    [{ bitDepth: 12, offsetDn: 4095 }, "offsetDn", "The offset must lie below the ceiling (2^bits − 1)."],
    [{ offsetDn: -1 }, "offsetDn", "The offset cannot be below 0 DN."],
    [{ readNoiseE: -0.1 }, "readNoiseE", "Read noise cannot be negative."],
    [{ name: "  " }, "name", "Name the detector profile."],
    [{ source: "measured" }, "source", "A measured profile names its dataset and carries the fit."],
    [{ colour: "teal" }, "_", null],
  ])("refuses %j with a message on %s and stores nothing", async (overrides, field, message) => {
    const before = await countIn(lab.labId);
    const reply = await lab.editor.post(base(), typed(unique("Bad"), overrides));
    expectError(reply, 400, "invalid_input");
    expect(Object.keys(reply.body.error.fields)).toContain(field);
    if (message) expect(reply.body.error.fields[field]).toBe(message);
    expect(await countIn(lab.labId)).toBe(before);
  });
});

describe("detector profiles: change and delete", () => {
  it("changes a profile for editors at the version they saw; a stale version gets 409 with the current one", async () => {
    const p = await create(lab.owner, typed(unique("Edit me")));
    expectError(await lab.viewer.patch(`${base()}/${p.id}`, { version: 1, notes: "viewer" }), 403, "forbidden");
    const first = await lab.editor.patch(`${base()}/${p.id}`, { version: 1, gain: { value: 1.6, unit: "e_per_dn" }, notes: "new gain mode" });
    expect(first.status, JSON.stringify(first.body)).toBe(200);
    expect(first.body.profile).toMatchObject({ version: 2, gainDnPerE: 0.625, notes: "new gain mode" });
    const stale = await lab.owner.patch(`${base()}/${p.id}`, { version: 1, notes: "late" });
    expect(stale.status).toBe(409);
    expect(stale.body.error.code).toBe("conflict");
    expect(stale.body.current).toMatchObject({ id: p.id, version: 2, notes: "new gain mode" });
    // An offset at the ceiling is refused against the stored bit depth too.
    const tooHigh = await lab.editor.patch(`${base()}/${p.id}`, { version: 2, offsetDn: 4095 });
    expectError(tooHigh, 400, "invalid_input");
    expect(tooHigh.body.error.fields.offsetDn).toMatch(/below the ceiling/);
  });

  it("deletes for editors and owners, writes audit entries for create and delete, and leaves datasets without a profile", async () => {
    const p = await create(lab.editor, typed(unique("Short-lived")));
    const plane = Uint16Array.from({ length: 16 * 16 }, (_, i) => 100 + (i % 50));
    const datasetId = await upload(lab.editor, await writeTiff([plane], { width: 16, height: 16, bitsPerSample: 16 }), { sizeC: 1, sizeZ: 1, sizeT: 1, order: "XYCZT" }, "one.tif");
    expect((await lab.editor.patch(`/api/datasets/${datasetId}`, { detectorProfileId: p.id })).status).toBe(200);
    expect((await lab.viewer.get(`${base()}/${p.id}`)).body.profile.datasetCount).toBe(1);

    expectError(await lab.viewer.delete(`${base()}/${p.id}`), 403, "forbidden");
    expect((await lab.owner.delete(`${base()}/${p.id}`)).status).toBe(204);
    expectError(await lab.owner.get(`${base()}/${p.id}`), 404, "not_found");
    const dataset = (await lab.viewer.get(`/api/datasets/${datasetId}`)).body.dataset;
    expect(dataset.detectorProfileId).toBeNull();
    expect(dataset.detector).toBeNull();

    const events = await db().AuditEvent.findAll({ where: { labId: lab.labId, target: `detector-profile:${p.id}` }, order: [["id", "ASC"]] });
    expect(events.map((e) => [e.action, e.actorId])).toEqual([
      ["detector_profile.created", lab.editor.id],
      ["detector_profile.deleted", lab.owner.id],
    ]);
    expect(events[0].detail).toMatchObject({ name: p.name, source: "manual", gainDnPerE: 0.5, gainEnteredAs: "dn_per_e" });
  });
});

describe("photon transfer from a dataset", () => {
  const fitOf = async (client: Client, datasetId: number, body: unknown = {}) => client.post(`/api/datasets/${datasetId}/photon-transfer`, body);

  it("recovers the known gain, read noise and offset of the synthetic camera, and saves nothing", async () => {
    const before = await countIn(lab.labId);
    const reply = await fitOf(lab.viewer, seriesId);
    expect(reply.status, JSON.stringify(reply.body)).toBe(200);
    const { fit, summary, suggested } = reply.body;
    // Tolerances for 128 × 128 frames: a variance's relative SE is √(2/16384) ≈ 1.1 % per level,
    // six levels are fitted; 3 % on K, 6 % on σd (EMVA 1288 Release 4.0 Linear, 2021).
    expect(fit.gainDnPerE / DEMO_CAMERA.gainDnPerE).toBeGreaterThan(0.97);
    expect(fit.gainDnPerE / DEMO_CAMERA.gainDnPerE).toBeLessThan(1.03);
    expect(fit.readNoiseE / DEMO_CAMERA.readNoiseE).toBeGreaterThan(0.94);
    expect(fit.readNoiseE / DEMO_CAMERA.readNoiseE).toBeLessThan(1.06);
    expect(Math.abs(fit.offsetDn - DEMO_CAMERA.offsetDn)).toBeLessThan(0.5);
    expect(fit.levels).toHaveLength(SERIES_FRACTIONS.length);
    expect(fit.saturation.reached).toBe(true);
    expect(fit.fit.levels).toBe(SERIES_FRACTIONS.filter((f) => f <= 0.65).length);
    // The server read the stored planes exactly: its numbers equal the library's on the frames we uploaded.
    const local = photonTransferFromFrames(series.frames);
    expect(fit.gainDnPerE).toBeCloseTo(local.gainDnPerE, 12);
    expect(fit.levels.map((l: { varianceDn2: number }) => l.varianceDn2)).toEqual(local.levels.map((l) => expect.closeTo(l.varianceDn2, 9)));
    expect(fit.levels[0].pages).toEqual([2, 3]);
    expect(summary).toMatchObject({ method: "EMVA 1288 mean–variance (photon transfer)", c: 0, pixelsPerFrame: 128 * 128, gainDnPerE: fit.gainDnPerE, fitLevels: fit.fit.levels });
    expect(summary.points).toHaveLength(SERIES_FRACTIONS.length);
    // 12-bit data (maximum 4095) → 12 bits suggested for the profile.
    expect(suggested).toMatchObject({ bitDepth: 12, gainDnPerE: fit.gainDnPerE, offsetDn: fit.offsetDn });
    expect(await countIn(lab.labId)).toBe(before);
  });

  it("recovers a 16-bit camera quoted at 4 e⁻/DN", async () => {
    const camera: CameraModel = { gainDnPerE: 0.25, offsetDn: 400, readNoiseE: 5, ceiling: 65535 };
    const file = await photonTransferTiff({ camera, side: 96, seed: 32 });
    const id = await upload(lab.editor, file.bytes, file.dimensions, "ccd-series.tif");
    const reply = await fitOf(lab.editor, id);
    expect(reply.status, JSON.stringify(reply.body)).toBe(200);
    expect(reply.body.fit.gainEPerDn / 4).toBeGreaterThan(0.96);
    expect(reply.body.fit.gainEPerDn / 4).toBeLessThan(1.04);
    expect(reply.body.suggested.bitDepth).toBe(16);
  });

  it("saves a measured profile with its dataset and fit, and refuses another lab's dataset as its source", async () => {
    const { body } = await fitOf(lab.editor, seriesId);
    const name = unique("Measured");
    const profile = await create(lab.editor, {
      name,
      bitDepth: body.suggested.bitDepth,
      offsetDn: body.suggested.offsetDn,
      gain: { value: body.suggested.gainDnPerE, unit: "dn_per_e" },
      readNoiseE: body.suggested.readNoiseE,
      saturationCapacityE: body.suggested.saturationCapacityE,
      source: "measured",
      sourceDatasetId: seriesId,
      fit: body.summary,
    });
    expect(profile).toMatchObject({ source: "measured", sourceDatasetId: seriesId, sourceDatasetTitle: expect.any(String), fit: { gainDnPerE: body.fit.gainDnPerE, points: expect.any(Array) } });
    // A changed note keeps it measured; a changed number makes it manual (no longer the fit's), the fit stays.
    const noted = await lab.editor.patch(`${base()}/${profile.id}`, { version: 1, notes: "bench camera, 12-bit mode" });
    expect(noted.body.profile.source).toBe("measured");
    const retyped = await lab.editor.patch(`${base()}/${profile.id}`, { version: 2, offsetDn: 101 });
    expect(retyped.body.profile).toMatchObject({ source: "manual", offsetDn: 101, fit: { gainDnPerE: body.fit.gainDnPerE } });

    const foreign = await lab.editor.post(base(), { ...typed(unique("Foreign")), source: "measured", sourceDatasetId: 4294967295, fit: body.summary });
    expectError(foreign, 400, "invalid_input");
    expect(foreign.body.error.fields.sourceDatasetId).toBe("Choose one of the lab's datasets.");
  });

  it("refuses a dataset that is not a dark pair followed by flat pairs, saying why", async () => {
    // Two planes: not enough pairs.
    const planes = (n: number, level = (k: number) => 100 + k * 10) => Array.from({ length: n }, (_, k) => Uint16Array.from({ length: 32 * 32 }, (_, i) => level(k) + (i % 7)));
    const two = await upload(lab.editor, await writeTiff(planes(2), { width: 32, height: 32, bitsPerSample: 16 }), { sizeC: 1, sizeZ: 1, sizeT: 2, order: "XYCZT" }, "two.tif");
    let reply = await fitOf(lab.editor, two);
    expectError(reply, 400, "invalid_input");
    expect(reply.body.error.message).toBe("A photon-transfer series needs a dark pair and at least 3 flat pairs (8 frames); this one has 2 frames.");
    // Nine planes: odd.
    const nine = await upload(lab.editor, await writeTiff(planes(9), { width: 32, height: 32, bitsPerSample: 16 }), { sizeC: 1, sizeZ: 1, sizeT: 9, order: "XYCZT" }, "nine.tif");
    reply = await fitOf(lab.editor, nine);
    expectError(reply, 400, "invalid_input");
    expect(reply.body.error.message).toMatch(/even number of frames; this one has 9/);
    // The series with its dark pair moved to the end.
    const moved = [...series.frames.slice(2), series.frames[0], series.frames[1]];
    const wrong = await upload(lab.editor, await writeTiff(moved, { width: 128, height: 128, bitsPerSample: 16 }), series.dimensions, "dark-last.tif");
    reply = await fitOf(lab.editor, wrong);
    expectError(reply, 400, "invalid_input");
    // The first flat pair that is no brighter than pages 0 and 1 is the real dark pair, now last.
    expect(reply.body.error.message).toMatch(/^Pages 16 and 17 \(mean 100\.0 DN\) are not brighter than the dark pair, pages 0 and 1/);
    // A channel the dataset does not have, a bad body.
    expectError(await fitOf(lab.editor, seriesId, { c: 3 }), 400, "invalid_input");
    expect((await fitOf(lab.editor, seriesId, { c: 3 })).body.error.message).toBe("This dataset has no channel 4.");
    expectError(await fitOf(lab.editor, seriesId, { channel: 0 }), 400, "invalid_input");
    expectError(await lab.editor.raw("POST", `/api/datasets/${seriesId}/photon-transfer`, { body: "{", headers: { "content-type": "application/json" } }), 400, "invalid_json");
    // No body at all is the same as {}.
    expect((await lab.editor.raw("POST", `/api/datasets/${seriesId}/photon-transfer`)).status).toBe(200);
  });
});

describe("a dataset names its detector profile", () => {
  it("lets editors set and clear it, carries the profile's numbers in the dataset JSON, and refuses another lab's profile", async () => {
    const p = await create(lab.editor, typed(unique("Bench cam"), { offsetDn: 99.5, gain: { value: 2, unit: "e_per_dn" } }));
    expectError(await lab.viewer.patch(`/api/datasets/${seriesId}`, { detectorProfileId: p.id }), 403, "forbidden");
    const set = await lab.editor.patch(`/api/datasets/${seriesId}`, { detectorProfileId: p.id });
    expect(set.status, JSON.stringify(set.body)).toBe(200);
    expect(set.body.dataset.detector).toEqual({ id: p.id, name: p.name, bitDepth: 12, offsetDn: 99.5, gainDnPerE: 0.5, readNoiseE: 2.2, saturationCapacityE: 7990 });
    const read = (await lab.viewer.get(`/api/datasets/${seriesId}`)).body.dataset;
    expect(read).toMatchObject({ detectorProfileId: p.id, detector: { name: p.name, offsetDn: 99.5, gainDnPerE: 0.5 } });
    const listed = (await lab.viewer.get(`/api/labs/${lab.labId}/datasets?pageSize=100`)).body.datasets.find((d: { id: number }) => d.id === seriesId);
    expect(listed.detector.name).toBe(p.name);

    const theirs = await create(lab.outsider, typed(unique("Not yours")), otherLabId);
    const refused = await lab.editor.patch(`/api/datasets/${seriesId}`, { detectorProfileId: theirs.id });
    expectError(refused, 400, "invalid_input");
    expect(refused.body.error.fields.detectorProfileId).toBe("Choose one of the lab's detector profiles.");
    expect((await lab.viewer.get(`/api/datasets/${seriesId}`)).body.dataset.detectorProfileId).toBe(p.id);

    const cleared = await lab.editor.patch(`/api/datasets/${seriesId}`, { detectorProfileId: null });
    expect(cleared.body.dataset).toMatchObject({ detectorProfileId: null, detector: null });
  });
});
