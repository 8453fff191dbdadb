// More than one machine, on loopback: TWO app servers (`next start`, the build the global set-up made)
// and THREE ingest worker processes share ONE MariaDB database and one S3 bucket (s3rver, a fake S3
// server). Twenty datasets are uploaded through both servers — each upload is started on one server,
// its parts alternate between the two and it is completed on the other — and every one must be
// ingested exactly once: one claim (attempt) per job in the database, one "claimed" line in exactly
// one worker's log, no duplicate plane rows. Then the originals are read the way the bench reads them:
// GET /api/datasets/:id/file redirects to a presigned URL of the object store, which answers Range
// requests with 206 (Node's fetch, lib/tiff/http-source.ts, and Chromium through the bench's worker).
import { execFile } from "node:child_process";
import { randomUUID } from "node:crypto";
import { mkdtempSync, readFileSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join, resolve } from "node:path";
import { promisify } from "node:util";
import { ListObjectsV2Command, S3Client } from "@aws-sdk/client-s3";
import { QueryTypes, type Sequelize } from "sequelize";
import S3rver from "s3rver";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { createSequelize } from "@/lib/server/db";
import { decodePlane } from "@/lib/tiff/decode";
import { httpSource } from "@/lib/tiff/http-source";
import { readTiffHeader } from "@/lib/tiff/structure";
import { writeTiff } from "@/lib/tiff/writer";
import { startAppServer, startIngestWorker, type AppServer } from "../../scripts/lib/app-server";
import { openBrowser, screenshot } from "../helpers/browser";
import { Client, uniqueEmail } from "../helpers/http";
import { partOf, sha256, startUpload } from "../helpers/uploads";
import { testEnv } from "../setup/test-env";

const run = promisify(execFile);
const root = resolve(import.meta.dirname, "..", "..");
const DATASETS = 20;
const WORKERS = 3;
const WIDTH = 48;
const HEIGHT = 32;
const BUCKET = "fluxframe-multi";
// s3rver's documented default credentials; loopback only.
const S3_KEY = "S3RVER";
// Two ports past the slot's own app port (slots are 10 apart, so these never meet another slot's).
const ports = [Number(testEnv.APP_PORT) + 5, Number(testEnv.APP_PORT) + 6];
const origins = ports.map((p) => `http://localhost:${p}`);
// Its own database: the global set-up's app and worker must not see (or take) these jobs.
const multiDb = `${testEnv.DB_NAME}_multi`;

interface Stack {
  index: number;
  bytes: Uint8Array;
  planes: Uint16Array[];
  sizeZ: number;
  datasetId: number;
}

let s3: S3rver | undefined;
let s3Dir = "";
let logDir = "";
let endpoint = "";
let admin: Sequelize | undefined;
let multi: Sequelize | undefined;
const servers: AppServer[] = [];
const workers: { logFile: string; stop(): Promise<void> }[] = [];
/** One signed-in client per app server, the same person on both. */
const on: Client[] = [];
let labId = 0;
const stacks: Stack[] = [];

// Every browser origin of the app may read the bucket, with Range, and see Content-Range (which a
// cross-origin fetch hides unless exposed): the CORS rule a deployment puts on its bucket.
const corsXml = `<CORSConfiguration><CORSRule>${origins.map((o) => `<AllowedOrigin>${o}</AllowedOrigin>`).join("")}<AllowedMethod>GET</AllowedMethod><AllowedMethod>HEAD</AllowedMethod><AllowedHeader>*</AllowedHeader><ExposeHeader>Content-Range</ExposeHeader><ExposeHeader>Content-Length</ExposeHeader><ExposeHeader>ETag</ExposeHeader><MaxAgeSeconds>600</MaxAgeSeconds></CORSRule></CORSConfiguration>`;

/** Rows from the shared database, counts as plain numbers (the driver may hand back BigInt). */
async function sql<T extends object>(query: string, replacements: unknown[] = []): Promise<T[]> {
  const rows = await multi!.query<Record<string, unknown>>(query, { type: QueryTypes.SELECT, replacements });
  return rows.map((row) => Object.fromEntries(Object.entries(row).map(([k, v]) => [k, typeof v === "bigint" ? Number(v) : v]))) as T[];
}

/** A 16-bit stack of 2 channels × sizeZ planes whose values depend on the stack, plane and pixel. */
async function makeStack(index: number): Promise<Omit<Stack, "datasetId">> {
  const sizeZ = 1 + (index % 4);
  const planes = Array.from({ length: 2 * sizeZ }, (_, p) =>
    Uint16Array.from({ length: WIDTH * HEIGHT }, (_, i) => (index * 131 + p * 977 + (i % WIDTH) * 7 + Math.floor(i / WIDTH) * 13) % 4096),
  );
  return { index, planes, sizeZ, bytes: await writeTiff(planes, { width: WIDTH, height: HEIGHT, bitsPerSample: 16 }) };
}

/** Started on one server, parts alternating between both, completed on the other. */
async function uploadAcross(stack: Omit<Stack, "datasetId">): Promise<number> {
  const first = on[stack.index % 2];
  const second = on[(stack.index + 1) % 2];
  const upload = await startUpload(first, labId, stack.bytes, {
    fileName: `stack-${stack.index}.tif`,
    title: `Shared stack ${stack.index}`,
    partSize: 4096,
    dimensions: { sizeC: 2, sizeZ: stack.sizeZ, sizeT: 1, order: "XYCZT" },
  });
  for (let n = 1; n <= upload.partCount; n++) {
    const client = on[(stack.index + n) % 2];
    const reply = await client.raw("PUT", `/api/labs/${labId}/uploads/${upload.id}/parts/${n}`, {
      body: partOf(stack.bytes, upload.partSize, n),
      headers: { "content-type": "application/octet-stream" },
    });
    if (reply.status !== 200) throw new Error(`stack ${stack.index} part ${n} via ${client.base}: ${reply.status} ${JSON.stringify(reply.body)}`);
  }
  const done = await second.post(`/api/labs/${labId}/uploads/${upload.id}/complete`, { sha256: sha256(stack.bytes) });
  if (done.status !== 201) throw new Error(`stack ${stack.index} complete: ${done.status} ${JSON.stringify(done.body)}`);
  return done.body.datasetId as number;
}

/** Every key in the bucket, read with a plain S3 client (not the app's driver). */
async function bucketKeys(): Promise<string[]> {
  const client = new S3Client({ endpoint, region: "us-east-1", forcePathStyle: true, credentials: { accessKeyId: S3_KEY, secretAccessKey: S3_KEY } });
  const keys: string[] = [];
  let token: string | undefined;
  do {
    const page = await client.send(new ListObjectsV2Command({ Bucket: BUCKET, ContinuationToken: token }));
    for (const item of page.Contents ?? []) keys.push(item.Key!);
    token = page.IsTruncated ? page.NextContinuationToken : undefined;
  } while (token);
  client.destroy();
  return keys;
}

/** Runs `task` over `items`, at most `limit` at a time (a 2-core machine, two servers, three workers). */
async function inBatches<T, R>(items: T[], limit: number, task: (item: T) => Promise<R>): Promise<R[]> {
  const out: R[] = new Array(items.length);
  let next = 0;
  await Promise.all(
    Array.from({ length: limit }, async () => {
      while (next < items.length) {
        const i = next++;
        out[i] = await task(items[i]);
      }
    }),
  );
  return out;
}

/** Waits for a condition outside a test (expect.poll works only inside one). */
async function until(what: string, probe: () => boolean, timeoutMs: number): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (!probe()) {
    if (Date.now() > deadline) throw new Error(`${what}: not within ${timeoutMs / 1000} s`);
    await new Promise((r) => setTimeout(r, 250));
  }
}

/**
 * Job ids each worker's log says it claimed, by the worker id the log names (host:pid, as written to
 * jobs.locked_by; the pid is the worker's node process, not the tsx launcher that was spawned).
 */
function claimsByWorker(): Map<string, number[]> {
  const claims = new Map<string, number[]>();
  for (const w of workers) {
    const found = [...readFileSync(w.logFile, "utf8").matchAll(/worker (\S+) claimed job (\d+) /g)];
    const names = new Set(found.map((m) => m[1]));
    // One log, one process: a second name would mean two workers wrote to one file.
    expect(names.size, w.logFile).toBeLessThanOrEqual(1);
    claims.set([...names][0] ?? w.logFile, found.map((m) => Number(m[2])));
  }
  return claims;
}

beforeAll(async () => {
  s3Dir = mkdtempSync(join(tmpdir(), "fluxframe-multi-s3-"));
  logDir = mkdtempSync(join(tmpdir(), "fluxframe-multi-logs-"));
  s3 = new S3rver({ address: "127.0.0.1", port: 0, silent: true, directory: s3Dir, configureBuckets: [{ name: BUCKET, configs: [corsXml] }] });
  endpoint = `http://127.0.0.1:${(await s3.run()).port}`;

  const env: Record<string, string> = {
    ...testEnv,
    DB_NAME: multiDb,
    NEXTAUTH_URL: origins[0],
    STORAGE_DRIVER: "s3",
    S3_ENDPOINT: endpoint,
    S3_REGION: "us-east-1",
    S3_BUCKET: BUCKET,
    S3_ACCESS_KEY_ID: S3_KEY,
    S3_SECRET_ACCESS_KEY: S3_KEY,
    S3_FORCE_PATH_STYLE: "1",
  };
  // A fresh, empty database on the shared server (the app's login may create databases whose name
  // starts with the test database's name), migrated by the deployment's own command, which only
  // connects to the database the settings name (README "Deployment").
  admin = createSequelize();
  await admin.query(`DROP DATABASE IF EXISTS \`${multiDb}\``);
  await admin.query(`CREATE DATABASE \`${multiDb}\` CHARACTER SET utf8mb4 COLLATE utf8mb4_unicode_ci`);
  const migrated = await run(join(root, "node_modules", ".bin", "tsx"), ["--conditions=react-server", join(root, "scripts", "migrate.ts")], {
    cwd: root,
    env: { ...process.env, ...env },
  });
  expect(migrated.stdout).toMatch(/^Applied: 0001-foundation, /);
  multi = createSequelize(multiDb);

  // A server left over from an interrupted run would answer the health check in place of a new one.
  for (const url of origins) {
    const stale = await fetch(`${url}/api/health`).then(() => true, () => false);
    if (stale) throw new Error(`Something already answers on ${url}; stop it (a left-over server of an earlier run?).`);
  }
  // One at a time: two `next start` booting at once on two cores only slows both.
  for (const port of ports) servers.push(await startAppServer({ port, mode: "start", env: { ...env, APP_PORT: String(port) }, quiet: true }));
  for (let w = 0; w < WORKERS; w++) {
    const logFile = join(logDir, `worker-${w}.log`);
    const started = startIngestWorker(env, { logFile });
    workers.push({ logFile, stop: started.stop });
  }
  // Every worker is polling before the first job exists, so all three have the same chance at it.
  await until("three workers ready", () => workers.every((w) => /ingest worker \d+ ready/.test(readFileSync(w.logFile, "utf8"))), 90_000);

  // One person signed in on each server; the session cookie each server set is signed with the
  // shared NEXTAUTH_SECRET, so either server would accept either.
  const email = uniqueEmail("multi");
  const password = `pw-${randomUUID()}`;
  for (const url of origins) {
    const client = new Client();
    client.base = url;
    on.push(client);
  }
  const signedUp = await on[0].post("/api/account/signup", { name: "Test multi", email, password });
  expect(signedUp.status).toBe(201);
  for (const client of on) expect(await client.signIn(email, password)).toBe(true);
  const lab = await on[1].post("/api/labs", { name: "Two machines lab" });
  expect(lab.status).toBe(201);
  labId = lab.body.lab.id;
}, 300_000);

afterAll(async () => {
  await Promise.all(workers.map((w) => w.stop()));
  await Promise.all(servers.map((s) => s.stop()));
  await s3?.close();
  await multi?.close();
  await admin?.query(`DROP DATABASE IF EXISTS \`${multiDb}\``);
  await admin?.close();
  if (s3Dir) rmSync(s3Dir, { recursive: true, force: true });
  if (logDir) rmSync(logDir, { recursive: true, force: true });
}, 120_000);

describe("two app servers and three ingest workers on one database and one bucket", () => {
  it("ingest each of 20 datasets uploaded through both servers exactly once", { timeout: 400_000 }, async () => {
    const made = await Promise.all(Array.from({ length: DATASETS }, (_, i) => makeStack(i)));
    const ids = await inBatches(made, 4, uploadAcross);
    made.forEach((m, i) => stacks.push({ ...m, datasetId: ids[i] }));
    expect(new Set(ids).size).toBe(DATASETS);

    // Done when no job is left queued or running (generous: a loaded 2-core machine).
    await expect
      .poll(async () => (await sql<{ n: number }>(`SELECT COUNT(*) AS n FROM jobs WHERE status IN ('done', 'failed')`))[0].n, { timeout: 300_000, interval: 500 })
      .toBe(DATASETS);

    // Every job: done, claimed once (attempts counts claims, incremented in the claiming transaction).
    const jobs = await sql<{ id: number; dataset_id: number; status: string; attempts: number; locked_by: string; error: string | null }>(
      `SELECT id, dataset_id, status, attempts, locked_by, error FROM jobs ORDER BY id`,
    );
    expect(jobs).toHaveLength(DATASETS);
    expect(jobs.map((j) => j.dataset_id).sort((a, b) => a - b)).toEqual([...ids].sort((a, b) => a - b));
    for (const job of jobs) expect(job, `job ${job.id}`).toMatchObject({ status: "done", attempts: 1, error: null });

    // Every dataset: ready, its planes stored once each (2 channels × sizeZ), two channel rows.
    for (const stack of stacks) {
      const [row] = await sql<{ status: string; n: number; ifds: number; positions: number }>(
        `SELECT d.status, COUNT(p.id) AS n, COUNT(DISTINCT p.ifd_index) AS ifds, COUNT(DISTINCT p.c, p.z, p.t) AS positions
           FROM datasets d LEFT JOIN planes p ON p.dataset_id = d.id WHERE d.id = ? GROUP BY d.id`,
        [stack.datasetId],
      );
      expect(row, `dataset ${stack.datasetId}`).toMatchObject({ status: "ready", n: 2 * stack.sizeZ, ifds: 2 * stack.sizeZ, positions: 2 * stack.sizeZ });
      const [stats] = await sql<{ n: number }>(`SELECT COUNT(*) AS n FROM channel_stats WHERE dataset_id = ?`, [stack.datasetId]);
      expect(stats.n).toBe(2);
    }

    // The bucket: one original per dataset, no staged part left, and exactly one thumbnail per dataset
    // (its key carries the time it was written, so a second ingest of a dataset would leave a second).
    const keys = await bucketKeys();
    expect(keys.filter((k) => k.startsWith("staging/"))).toEqual([]);
    expect(keys.filter((k) => k.startsWith("originals/"))).toHaveLength(DATASETS);
    for (const stack of stacks) {
      const [row] = await sql<{ blob_key: string; thumbnail_key: string }>(`SELECT blob_key, thumbnail_key FROM datasets WHERE id = ?`, [stack.datasetId]);
      expect(keys).toContain(row.blob_key);
      expect(keys.filter((k) => k.startsWith(`derived/${stack.datasetId}/`))).toEqual([row.thumbnail_key]);
    }

    // The workers' own logs: each job claimed in exactly one log, once, by the worker the row names.
    const claims = claimsByWorker();
    const all = [...claims.values()].flat();
    expect(all.sort((a, b) => a - b)).toEqual(jobs.map((j) => j.id));
    for (const job of jobs) {
      const owners = [...claims].filter(([, list]) => list.includes(job.id)).map(([name]) => name);
      expect(owners, `job ${job.id}`).toHaveLength(1);
      expect(job.locked_by, `job ${job.id}`).toBe(owners[0]);
    }
    const busy = [...claims.values()].filter((list) => list.length > 0).length;
    console.log(`[multi-machine] claims per worker: ${[...claims.values()].map((l) => l.length).join(", ")}`);
    // Twenty jobs arriving over several seconds against three polling workers: more than one takes part.
    expect(busy).toBeGreaterThanOrEqual(2);

    // Either server answers for any dataset, whichever server took its upload, and serves its
    // thumbnail (derived data) from the bucket.
    for (const stack of stacks.slice(0, 4)) {
      for (const client of on) {
        const reply = await client.get(`/api/datasets/${stack.datasetId}`);
        expect(reply.status).toBe(200);
        expect(reply.body.dataset).toMatchObject({ status: "ready", sizeC: 2, sizeZ: stack.sizeZ, sizeT: 1 });
        const thumbnail = await client.raw("GET", `/api/datasets/${stack.datasetId}/thumbnail`);
        expect(thumbnail.status).toBe(200);
        expect(thumbnail.headers.get("content-type")).toBe("image/png");
      }
    }
  });

  it("send GET /api/datasets/:id/file to a presigned URL that answers a Range request with 206 and the right bytes", async () => {
    expect(stacks.length).toBe(DATASETS);
    const stack = stacks[3];
    for (const client of on) {
      const reply = await client.raw("GET", `/api/datasets/${stack.datasetId}/file`);
      expect(reply.status).toBe(302);
      const location = new URL(reply.headers.get("location")!);
      expect(location.origin).toBe(endpoint);
      expect(location.pathname).toMatch(new RegExp(`^/${BUCKET}/originals/${labId}/`));
      expect(location.searchParams.get("X-Amz-Signature")).toMatch(/^[0-9a-f]{64}$/);
      expect(location.searchParams.get("X-Amz-Expires")).toBe("300");

      const from = 1000;
      const to = 2999;
      const ranged = await fetch(location, { headers: { Range: `bytes=${from}-${to}`, Origin: client.base } });
      expect(ranged.status).toBe(206);
      expect(ranged.headers.get("content-range")).toBe(`bytes ${from}-${to}/${stack.bytes.length}`);
      expect(Buffer.from(await ranged.arrayBuffer()).equals(Buffer.from(stack.bytes.subarray(from, to + 1)))).toBe(true);
      // What a browser on the app's origin needs to read it (the bucket's CORS rule, see README "Deployment").
      expect(ranged.headers.get("access-control-allow-origin")).toBe(client.base);
      expect(ranged.headers.get("access-control-expose-headers")).toContain("Content-Range");
    }
    // Nobody is redirected without access: the presigned URL is handed out only after the check.
    const stranger = new Client();
    stranger.base = origins[0];
    expect((await stranger.raw("GET", `/api/datasets/${stack.datasetId}/file`)).status).toBe(401);
    // (Refusing a tampered or expired signature is the object store's job; s3rver 3.7 does not check
    // V4 signatures at all — lib/middleware/authentication.js — so that is not tested against it here.)
  });

  it("let the bench's range reader (lib/tiff/http-source.ts) follow the redirect and decode planes from the object store", async () => {
    const stack = stacks[7];
    const planes = (await on[1].get(`/api/datasets/${stack.datasetId}/planes`)).body.planes as { ifdIndex: number; ifdOffset: number; c: number; z: number }[];
    expect(planes).toHaveLength(2 * stack.sizeZ);
    const asked: string[] = [];
    const recordingFetch: typeof fetch = (input, init) => {
      asked.push(String(input));
      return fetch(input, init);
    };
    const fileUrl = `${origins[1]}/api/datasets/${stack.datasetId}/file`;
    const source = await httpSource(fileUrl, { size: stack.bytes.length, headers: { cookie: on[1].cookieHeader() }, fetch: recordingFetch });
    const header = await readTiffHeader(source);
    for (const plane of planes) {
      const decoded = await decodePlane(source, plane.ifdOffset, { header });
      expect(decoded.width).toBe(WIDTH);
      // Plane order XYCZT: channel varies fastest.
      expect(Array.from(decoded.data)).toEqual(Array.from(stack.planes[plane.c + 2 * plane.z]));
    }
    // The first read went to the app and was redirected; every later read went straight to the store.
    expect(asked[0]).toBe(fileUrl);
    expect(asked.length).toBeGreaterThan(planes.length);
    for (const url of asked.slice(1)) expect(url.startsWith(`${endpoint}/${BUCKET}/originals/`), url).toBe(true);
  });

  it("let Chromium's bench draw a plane from presigned ranges, inside the Content-Security-Policy", { timeout: 180_000 }, async () => {
    const stack = stacks[5];
    const page0 = await on[0].raw("GET", `/labs/${labId}/datasets/${stack.datasetId}`);
    expect(page0.status).toBe(200);
    const csp = page0.headers.get("content-security-policy") ?? "";
    const connect = /connect-src ([^;]+)/.exec(csp)?.[1].split(" ") ?? [];
    expect(connect).toContain(endpoint);

    const person = await openBrowser();
    const fromStore: { status: number; url: string }[] = [];
    person.context.on("response", (response) => {
      if (response.url().startsWith(endpoint)) fromStore.push({ status: response.status(), url: response.url() });
    });
    try {
      const page = person.page;
      await page.goto(`${origins[0]}/signin`);
      await page.locator("form[data-ready]").waitFor();
      await page.getByLabel("E-mail").fill(on[0].email);
      await page.getByLabel("Password").fill(on[0].password);
      await page.getByRole("button", { name: "Sign in" }).click();
      await page.waitForURL(`${origins[0]}/labs`);
      await page.goto(`${origins[0]}/labs/${labId}/datasets/${stack.datasetId}`);
      await page.getByRole("heading", { name: `Shared stack ${stack.index}` }).waitFor();
      await page.getByText(/first plane drawn in \d+ ms/).waitFor({ timeout: 60_000 });
      // The raw values under the pointer are the stored ones: the bytes came through intact.
      await page.locator("[aria-label^='Bench:']").focus();
      await page.keyboard.press("1");
      await page.waitForTimeout(200);
      const box = (await page.getByLabel("Image plane").boundingBox())!;
      const scale = box.width / WIDTH;
      await page.mouse.move(box.x + 5.5 * scale, box.y + 5.5 * scale);
      const readout = page.getByLabel("Readout");
      await readout.getByText("x 5 y 5").waitFor();
      // z 0, t 0: channel 0 is plane 0, channel 1 is plane 1 (order XYCZT).
      for (const c of [0, 1]) await expect(readout.textContent()).resolves.toContain(`Channel ${c + 1} ${stack.planes[c][5 * WIDTH + 5]} DN`);
      await screenshot(page, "multi-machine-bench-from-s3");
      expect(fromStore.some((r) => r.status === 206 && r.url.includes(`/${BUCKET}/originals/`))).toBe(true);
      expect(fromStore.every((r) => r.status === 206 || r.status === 204 || r.status === 200)).toBe(true);
    } finally {
      // Throws if the Content-Security-Policy refused anything (the S3 origin in connect-src, for one).
      await person.close();
    }
  });
});
