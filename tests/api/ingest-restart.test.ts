// The ingest worker process is killed (SIGKILL, no clean-up) in the middle of ingesting a bigger
// multi-plane stack and a new worker process is started (issue 7, "server restart during ingest").
// A separate stack (own MariaDB, app, storage) so that no other worker can take the job. The new
// worker claims the job once its heartbeat is stale (JOB_STALE_SECONDS, 10 s here instead of the default
// 60 s, lib/server/jobs.ts) and redoes it; then
// every plane row is there exactly once with the statistics of its own pixels, the channel
// statistics are complete, and the dataset is ready with progress at the plane count.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { Sequelize } from "sequelize";
import { initModels, type Models } from "@/models";
import { writeTiff } from "@/lib/tiff/writer";
import type { Client } from "../helpers/http";
import { SeparateStack } from "../helpers/separate-stack";
import { sha256, uploadFile, waitForIngest } from "../helpers/uploads";

const stack = new SeparateStack({ index: 1, name: "ingestrestart" });
let person: Client;
let labId: number;
let sequelize: Sequelize;
let models: Models;
// 2 channels × 4 z × 8 t = 64 planes of 512×512 (32 MiB), invented data; each plane has its own range.
const [sizeC, sizeZ, sizeT, w, h] = [2, 4, 8, 512, 512];
const planes = Array.from({ length: sizeC * sizeZ * sizeT }, (_, k) => Uint16Array.from({ length: w * h }, (_, i) => 10 + k + ((i * 7 + k * 131) % (1000 + 40 * k))));
let bytes: Uint8Array;

beforeAll(async () => {
  // Written first: seconds of CPU between two requests could outlast the app's keep-alive timeout.
  bytes = await writeTiff(planes, { width: w, height: h, bitsPerSample: 16 });
  await stack.start();
  sequelize = stack.sequelize();
  models = initModels(sequelize);
  person = await stack.newUser("ingest");
  labId = (await person.post("/api/labs", { name: "Ingest restart lab" })).body.lab.id;
}, 240_000);

afterAll(async () => {
  await sequelize?.close();
  await stack.stop();
}, 120_000);

async function waitFor<T>(probe: () => Promise<T | null | undefined | false>, timeoutMs: number, what: string): Promise<T> {
  const deadline = Date.now() + timeoutMs;
  while (Date.now() < deadline) {
    const value = await probe();
    if (value) return value;
    await new Promise((r) => setTimeout(r, 50));
  }
  throw new Error(`${what}: not within ${timeoutMs} ms`);
}

describe("ingest across a worker restart", () => {
  it("finishes a multi-plane stack after its worker was killed mid-way, with every plane once and the right statistics", async () => {
    const done = await uploadFile(person, labId, bytes, { fileName: "big.tif", partSize: 8 * 1024 * 1024, dimensions: { sizeC, sizeZ, sizeT, order: "XYCZT" } });
    expect(done.status, JSON.stringify(done.body)).toBe(201);
    const datasetId = done.body.datasetId as number;
    const { Dataset, Job, Plane, ChannelStat } = models;

    // The first worker starts on it; it is killed once some planes are done, but not all.
    stack.startWorker();
    const first = stack.worker!.child;
    const midway = await waitFor(async () => {
      const d = await Dataset.findByPk(datasetId);
      return d && d.status === "ingesting" && d.progressDone > 0 && d.progressDone < planes.length ? d : null;
    }, 120_000, "the first worker reporting progress");
    process.kill(-first.pid!, "SIGKILL");
    await waitFor(async () => first.exitCode !== null || first.signalCode !== null, 10_000, "the first worker exiting");
    stack.worker = null;
    const orphan = (await Job.findOne({ where: { datasetId } }))!;
    expect(orphan.status).toBe("running");
    // Held by the dead worker (its node process is a child of the tsx launcher whose group was killed).
    expect(orphan.lockedBy).toMatch(/:\d+$/);
    const dead = orphan.lockedBy;
    // Nothing partial was committed: planes are written in one transaction at the end.
    expect(await Plane.count({ where: { datasetId } })).toBe(0);
    expect(midway.progressDone).toBeLessThan(planes.length);

    // A new worker process takes the job over once the heartbeat is stale, and redoes it.
    stack.startWorker({ JOB_STALE_SECONDS: "10" });
    const ingested = await waitForIngest(person, datasetId, 180_000);
    expect(ingested.dataset).toMatchObject({ status: "ready", sha256: sha256(bytes), sizeC, sizeZ, sizeT, progress: { done: planes.length, total: planes.length } });
    const job = (await Job.findOne({ where: { datasetId } }))!;
    expect(job.status).toBe("done");
    expect(job.attempts).toBe(2);
    expect(job.lockedBy).not.toBe(dead);

    const rows = await Plane.findAll({ where: { datasetId }, order: [["ifdIndex", "ASC"]], raw: true });
    expect(rows).toHaveLength(planes.length);
    expect(new Set(rows.map((r) => r.ifdIndex)).size).toBe(planes.length);
    expect(new Set(rows.map((r) => `${r.c}/${r.z}/${r.t}`)).size).toBe(planes.length);
    // XYCZT: the plane index k is c + sizeC·(z + sizeZ·t); min and max are those of plane k's pixels.
    for (const row of rows) {
      const k = row.ifdIndex;
      expect({ k, c: row.c, z: row.z, t: row.t }).toEqual({ k, c: k % sizeC, z: Math.floor(k / sizeC) % sizeZ, t: Math.floor(k / (sizeC * sizeZ)) });
      let min = Infinity;
      let max = -Infinity;
      for (const v of planes[k]) {
        if (v < min) min = v;
        if (v > max) max = v;
      }
      expect({ k, min: row.min, max: row.max }).toEqual({ k, min, max });
    }
    expect(await ChannelStat.count({ where: { datasetId } })).toBe(sizeC);
  }, 420_000);
});
