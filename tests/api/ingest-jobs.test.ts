// The ingest job queue and the bin clean-up, against the real MariaDB, blob store and worker process.
import { readFileSync } from "node:fs";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { purgeBin } from "@/lib/server/datasets";
import { blobStore } from "@/lib/server/storage";
import { loadStackFixture, type StackFixture } from "../imaging/stack-fixture";
import { db } from "../helpers/db";
import { labWithMembers, type LabWithMembers } from "../helpers/http";
import { run, tempDir, PYTHON } from "../helpers/tiff-tools";
import { uploadFile, waitForIngest } from "../helpers/uploads";

let lab: LabWithMembers;
let fixture: StackFixture;
let bytes: Uint8Array;

beforeAll(async () => {
  lab = await labWithMembers();
  fixture = loadStackFixture();
  bytes = new Uint8Array(readFileSync(fixture.omePath));
});

afterAll(() => fixture?.remove());

async function waitFor<T>(probe: () => Promise<T | null | undefined | false>, timeoutMs = 90_000): Promise<T> {
  const deadline = Date.now() + timeoutMs;
  while (Date.now() < deadline) {
    const value = await probe();
    if (value) return value;
    await new Promise((r) => setTimeout(r, 200));
  }
  throw new Error("condition not met in time");
}

describe("ingest jobs", () => {
  it("are claimed again and finished when their worker died mid-way", async () => {
    const reply = await uploadFile(lab.editor, lab.labId, bytes, { title: "Orphaned ingest" });
    const datasetId = reply.body.datasetId;
    await waitForIngest(lab.editor, datasetId);
    const { Job, Dataset, Plane } = db();
    // Simulate a worker killed during the job: running, a heartbeat long past, planes already gone.
    const job = (await Job.findOne({ where: { datasetId } }))!;
    await job.update({ status: "running", lockedBy: "worker-that-died:1", heartbeatAt: new Date(Date.now() - 10 * 60_000) });
    await Dataset.update({ status: "ingesting", progressDone: 3 }, { where: { id: datasetId } });
    await Plane.destroy({ where: { datasetId } });

    const finished = await waitFor(async () => {
      const j = await Job.findByPk(job.id);
      return j?.status === "done" && j.lockedBy !== "worker-that-died:1" ? j : null;
    });
    expect(finished.attempts).toBeGreaterThan(job.attempts);
    expect((await Dataset.findByPk(datasetId))!.status).toBe("ready");
    expect(await Plane.count({ where: { datasetId } })).toBe(12);
  });

  it("fail a file without OME-XML whose typed C·Z·T does not match its planes, saying so", async () => {
    const tmp = tempDir("plain");
    try {
      const path = tmp.path("plain.tif");
      run(PYTHON, ["-c", `import numpy as np, tifffile; tifffile.imwrite(${JSON.stringify(path)}, np.zeros((6, 8, 8), np.uint16), photometric="minisblack", metadata=None)`]);
      const plain = new Uint8Array(readFileSync(path));
      const reply = await uploadFile(lab.editor, lab.labId, plain, { fileName: "plain.tif", dimensions: { sizeC: 2, sizeZ: 2, sizeT: 2, order: "XYCZT" } });
      const { dataset } = await waitForIngest(lab.editor, reply.body.datasetId);
      expect(dataset.status).toBe("failed");
      expect(dataset.failureReason).toContain("the file holds 6 planes");
      // Correcting the dimensions re-reads the planes.
      const fixed = await lab.editor.patch(`/api/datasets/${reply.body.datasetId}`, { dimensions: { sizeC: 2, sizeZ: 1, sizeT: 3, order: "XYCZT" } });
      expect(fixed.status).toBe(200);
      const again = await waitForIngest(lab.editor, reply.body.datasetId);
      expect(again.dataset).toMatchObject({ status: "ready", sizeC: 2, sizeZ: 1, sizeT: 3, dimensionsFrom: "form" });
    } finally {
      tmp.remove();
    }
  });
});

describe("the bin clean-up", () => {
  it("removes datasets deleted more than 7 days ago, rows and stored file, and keeps newer ones", async () => {
    const old = (await uploadFile(lab.editor, lab.labId, bytes, { title: "Long deleted" })).body.datasetId;
    const recent = (await uploadFile(lab.editor, lab.labId, bytes, { title: "Just deleted" })).body.datasetId;
    await waitForIngest(lab.editor, old);
    await waitForIngest(lab.editor, recent);
    await lab.editor.delete(`/api/datasets/${old}`);
    await lab.editor.delete(`/api/datasets/${recent}`);
    const { Dataset, Plane } = db();
    await Dataset.update({ deletedAt: new Date(Date.now() - 8 * 86_400_000) }, { where: { id: old } });
    const oldRow = (await Dataset.findByPk(old))!;

    await purgeBin();

    expect(await Dataset.findByPk(old)).toBeNull();
    expect(await Plane.count({ where: { datasetId: old } })).toBe(0);
    expect(await blobStore().stat(oldRow.blobKey)).toBeNull();
    const kept = (await Dataset.findByPk(recent))!;
    expect(kept.deletedAt).not.toBeNull();
    expect(await blobStore().stat(kept.blobKey)).not.toBeNull();
  });
});
