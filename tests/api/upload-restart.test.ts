// An upload survives the app process dying mid-part: a second `next start` on its own port (same
// build, database and storage) takes two parts, is killed with SIGKILL while a third part is still
// streaming in, and is started again. The half-sent part is not counted, the stored parts are, and
// the upload resumes from there to a dataset whose SHA-256 equals the file's (nothing half-written
// is visible, nothing stored before is lost).
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { startAppServer, type AppServer } from "../../scripts/lib/app-server";
import { closeDb } from "@/lib/server/db";
import { writeTiff } from "@/lib/tiff/writer";
import { db } from "../helpers/db";
import { labWithMembers, type LabWithMembers } from "../helpers/http";
import { partOf, putPart, sha256, startUpload, waitForIngest } from "../helpers/uploads";
import { testEnv } from "../setup/test-env";

const port = Number(testEnv.APP_PORT) + 5;
let lab: LabWithMembers;
let second: AppServer | null = null;
const start = () => startAppServer({ port, mode: "start", env: testEnv, quiet: true });

beforeAll(async () => {
  lab = await labWithMembers();
  second = await start();
}, 180_000);

afterAll(async () => {
  await second?.stop();
  await closeDb();
});

describe("an upload across an app restart", () => {
  it("keeps the stored parts, drops the half-sent one, and completes after the restart", async () => {
    const planes = Array.from({ length: 6 }, (_, k) => Uint16Array.from({ length: 64 * 48 }, (_, i) => (i * 13 + k * 101) % 4096));
    const bytes = await writeTiff(planes, { width: 64, height: 48, bitsPerSample: 16 });
    const client = lab.editor;
    client.base = second!.url;
    try {
      const upload = await startUpload(client, lab.labId, bytes, { fileName: "restart.tif", partSize: 8192, dimensions: { sizeC: 1, sizeZ: 1, sizeT: 6, order: "XYCZT" } });
      expect(upload.partCount).toBeGreaterThan(4);
      for (const n of [1, 2]) expect((await putPart(client, lab.labId, upload.id, n, partOf(bytes, upload.partSize, n))).status).toBe(200);

      // Part 3 starts streaming: half of it is sent, then the app process is killed outright.
      const part = partOf(bytes, upload.partSize, 3);
      let sendRest: () => void = () => undefined;
      const body = new ReadableStream<Uint8Array>({
        start(controller) {
          controller.enqueue(part.subarray(0, part.length / 2));
          sendRest = () => {
            try {
              controller.enqueue(part.subarray(part.length / 2));
              controller.close();
            } catch {
              /* the connection is already gone */
            }
          };
        },
      });
      const inFlight = fetch(`${second!.url}/api/labs/${lab.labId}/uploads/${upload.id}/parts/3`, {
        method: "PUT",
        body,
        headers: { "content-type": "application/octet-stream", cookie: client.cookieHeader(), "x-forwarded-for": client.address },
        duplex: "half",
      } as RequestInit & { duplex: "half" }).then(
        (r) => r.status,
        () => "connection lost" as const,
      );
      await new Promise((r) => setTimeout(r, 300));
      process.kill(-second!.child.pid!, "SIGKILL");
      sendRest();
      expect(await inFlight).toBe("connection lost");
      second = null;

      second = await start();
      const resumed = await client.get(`/api/labs/${lab.labId}/uploads/${upload.id}`);
      expect(resumed.status).toBe(200);
      expect(resumed.body.upload.receivedParts).toEqual([1, 2]);
      expect(resumed.body.upload.status).toBe("open");
      // No dataset exists for it yet: nothing half-written is visible in the library.
      expect(await db().Dataset.count({ where: { labId: lab.labId } })).toBe(0);

      for (let n = 3; n <= upload.partCount; n++) {
        expect((await putPart(client, lab.labId, upload.id, n, partOf(bytes, upload.partSize, n))).status).toBe(200);
      }
      const done = await client.post(`/api/labs/${lab.labId}/uploads/${upload.id}/complete`, { sha256: sha256(bytes) });
      expect(done.status, JSON.stringify(done.body)).toBe(201);
      const ingested = await waitForIngest(client, done.body.datasetId);
      expect(ingested.dataset.status).toBe("ready");
      expect(ingested.dataset.sha256).toBe(sha256(bytes));
      const file = await fetch(`${second.url}/api/datasets/${done.body.datasetId}/file`, { headers: { cookie: client.cookieHeader() } });
      expect(sha256(new Uint8Array(await file.arrayBuffer()))).toBe(sha256(bytes));
    } finally {
      client.base = testEnv.NEXTAUTH_URL;
    }
  }, 240_000);
});
