// The blob store's disk fills up during an upload (issue 7, "Upload faults: disk full"). A separate
// stack (own MariaDB, app server, ingest worker and storage folder) whose app runs with
// STORAGE_FAULT_AFTER_BYTES: the local store then fails writes with ENOSPC once that many bytes were
// written by the process, as a full disk does. Expected: the failing request answers 507 Insufficient
// Storage (RFC 4918 §11.5) in the one error shape with Retry-After; nothing half-written becomes
// visible (no dataset in the library or the database, no object under the failed key); a dataset
// stored before is intact (its verify action still matches); and once space is back (the app
// restarted without the limit) the same upload resumes and completes to the right SHA-256.
import { existsSync, readdirSync } from "node:fs";
import { join } from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { QueryTypes } from "sequelize";
import { writeTiff } from "@/lib/tiff/writer";
import { expectError } from "../helpers/errors";
import type { Client } from "../helpers/http";
import { SeparateStack } from "../helpers/separate-stack";
import { partOf, putPart, sha256, startUpload, uploadFile, waitForIngest } from "../helpers/uploads";

const stack = new SeparateStack({ index: 2, name: "diskfull", worker: true });
let person: Client;
let labId: number;
let before: { id: number; sha256: string };

const stack16 = (planes: number, seed: number) =>
  writeTiff(
    Array.from({ length: planes }, (_, k) => Uint16Array.from({ length: 64 * 48 }, (_, i) => (i * 7 + k * 131 + seed) % 4096)),
    { width: 64, height: 48, bitsPerSample: 16 },
  );

/** Every file under the stack's storage folder (temp files included), relative to it. */
function storedFiles(dir = stack.env.STORAGE_DIR, prefix = ""): string[] {
  if (!existsSync(dir)) return [];
  return readdirSync(dir, { withFileTypes: true }).flatMap((e) =>
    e.isDirectory() ? storedFiles(join(dir, e.name), `${prefix}${e.name}/`) : [`${prefix}${e.name}`],
  );
}

async function datasetRows(): Promise<{ id: number; sha256: string }[]> {
  const sequelize = stack.sequelize();
  try {
    return await sequelize.query("SELECT id, sha256 FROM datasets WHERE lab_id = ? ORDER BY id", { replacements: [labId], type: QueryTypes.SELECT });
  } finally {
    await sequelize.close();
  }
}

/** The dataset stored before the fault still verifies, and the library and database hold exactly `rows`. */
async function expectNothingNewAndEarlierIntact(rows: { id: number; sha256: string }[]) {
  const verify = await person.post(`/api/datasets/${before.id}/verify`);
  expect(verify.status).toBe(200);
  expect(verify.body).toMatchObject({ match: true, expected: before.sha256, actual: before.sha256 });
  const library = await person.get(`/api/labs/${labId}/datasets`);
  expect(library.status).toBe(200);
  expect(library.body.datasets.map((d: { id: number }) => d.id).sort((a: number, b: number) => a - b)).toEqual(rows.map((r) => r.id));
  expect(await datasetRows()).toEqual(rows);
}

beforeAll(async () => {
  await stack.start();
  person = await stack.newUser("full");
  labId = (await person.post("/api/labs", { name: "Full disk lab" })).body.lab.id;
  const bytes = await stack16(4, 1);
  const done = await uploadFile(person, labId, bytes, { fileName: "before.tif", dimensions: { sizeC: 1, sizeZ: 1, sizeT: 4, order: "XYCZT" } });
  expect(done.status).toBe(201);
  expect((await waitForIngest(person, done.body.datasetId, 60_000)).dataset.status).toBe("ready");
  before = { id: done.body.datasetId, sha256: sha256(bytes) };
}, 240_000);

afterAll(async () => {
  await stack.stop();
}, 120_000);

describe("disk full during an upload", () => {
  it("refuses the part that does not fit with 507, keeps the parts before it, and resumes once space is back", async () => {
    const bytes = await stack16(8, 2);
    const partSize = 8192;
    // Parts 1 and 2 fit (16 384 bytes); part 3 would pass the 20 000-byte "disk".
    await stack.stopApp();
    await stack.startApp({ STORAGE_FAULT_AFTER_BYTES: "20000" });
    const upload = await startUpload(person, labId, bytes, { fileName: "full.tif", partSize, dimensions: { sizeC: 1, sizeZ: 1, sizeT: 8, order: "XYCZT" } });
    expect(upload.partCount).toBeGreaterThan(4);
    for (const n of [1, 2]) expect((await putPart(person, labId, upload.id, n, partOf(bytes, partSize, n))).status).toBe(200);
    const refused = await putPart(person, labId, upload.id, 3, partOf(bytes, partSize, 3));
    expectError(refused, 507, "insufficient_storage");
    expect(Number(refused.headers.get("retry-after"))).toBeGreaterThan(0);
    expect(refused.body.error.message).toMatch(/storage is full/);
    // A retry while the disk is still full is refused the same way, and changes nothing.
    expectError(await putPart(person, labId, upload.id, 3, partOf(bytes, partSize, 3)), 507, "insufficient_storage");

    const state = await person.get(`/api/labs/${labId}/uploads/${upload.id}`);
    expect(state.body.upload).toMatchObject({ status: "open", receivedParts: [1, 2], datasetId: null });
    // Nothing half-written: only the two stored parts under staging, no temp file, no part 3.
    expect(storedFiles().filter((f) => f.startsWith(`staging/${upload.id}/`))).toEqual([`staging/${upload.id}/000001`, `staging/${upload.id}/000002`]);
    expect(storedFiles().filter((f) => f.includes("~"))).toEqual([]);
    await expectNothingNewAndEarlierIntact([before]);

    // Space is back: the app runs again without the limit, and the same upload resumes at part 3.
    await stack.stopApp();
    await stack.startApp();
    for (let n = 3; n <= upload.partCount; n++) expect((await putPart(person, labId, upload.id, n, partOf(bytes, partSize, n))).status).toBe(200);
    const done = await person.post(`/api/labs/${labId}/uploads/${upload.id}/complete`, { sha256: sha256(bytes) });
    expect(done.status, JSON.stringify(done.body)).toBe(201);
    const ingested = await waitForIngest(person, done.body.datasetId, 60_000);
    expect(ingested.dataset).toMatchObject({ status: "ready", sha256: sha256(bytes), sizeBytes: bytes.length });
    const verify = await person.post(`/api/datasets/${done.body.datasetId}/verify`);
    expect(verify.body.match).toBe(true);
  }, 240_000);

  it("refuses the completion when the assembled original does not fit, keeps the parts, and completes once space is back", async () => {
    const bytes = await stack16(6, 3);
    const partSize = 16384;
    // All parts fit (≈37 KB), but writing the assembled original as well would pass 60 000 bytes.
    await stack.stopApp();
    await stack.startApp({ STORAGE_FAULT_AFTER_BYTES: "60000" });
    const datasetsBefore = await datasetRows();
    const upload = await startUpload(person, labId, bytes, { fileName: "full-at-the-end.tif", partSize, dimensions: { sizeC: 1, sizeZ: 1, sizeT: 6, order: "XYCZT" } });
    for (let n = 1; n <= upload.partCount; n++) expect((await putPart(person, labId, upload.id, n, partOf(bytes, partSize, n))).status).toBe(200);
    const refused = await person.post(`/api/labs/${labId}/uploads/${upload.id}/complete`, { sha256: sha256(bytes) });
    expectError(refused, 507, "insufficient_storage");

    // The upload is open again with every part, and no original or dataset exists for it.
    const state = await person.get(`/api/labs/${labId}/uploads/${upload.id}`);
    expect(state.body.upload.status).toBe("open");
    expect(state.body.upload.receivedParts).toHaveLength(upload.partCount);
    expect(storedFiles().filter((f) => f.startsWith("originals/") && f.includes(upload.id))).toEqual([]);
    expect(storedFiles().filter((f) => f.includes("~"))).toEqual([]);
    await expectNothingNewAndEarlierIntact(datasetsBefore);

    await stack.stopApp();
    await stack.startApp();
    const done = await person.post(`/api/labs/${labId}/uploads/${upload.id}/complete`, { sha256: sha256(bytes) });
    expect(done.status, JSON.stringify(done.body)).toBe(201);
    const ingested = await waitForIngest(person, done.body.datasetId, 60_000);
    expect(ingested.dataset).toMatchObject({ status: "ready", sha256: sha256(bytes) });
    // Staging is cleared after a completion.
    expect(storedFiles().filter((f) => f.startsWith(`staging/${upload.id}/`))).toEqual([]);
  }, 240_000);
});
