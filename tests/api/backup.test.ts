// Backup and restore (scripts/lib/backup.ts) against the real test MariaDB and blob store: a backup
// of the whole test database and storage, restored into an empty database and an empty folder, has
// the same row count in every table and every dataset's original hashes to its recorded SHA-256;
// a damaged backup is refused before anything is written, and so is a target that is not empty.
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import mariadb from "mariadb";
import S3rver from "s3rver";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { backup, restore, RestoreError, type Manifest } from "../../scripts/lib/backup";
import { closeDb } from "@/lib/server/db";
import { writeTiff } from "@/lib/tiff/writer";
import { labWithMembers } from "../helpers/http";
import { sha256, uploadFile, waitForIngest } from "../helpers/uploads";
import { testEnv } from "../setup/test-env";

const work = mkdtempSync(join(tmpdir(), "fluxframe-backup-"));
const source = { host: testEnv.DB_HOST, port: Number(testEnv.DB_PORT), name: testEnv.DB_NAME, user: testEnv.DB_USER, password: testEnv.DB_PASSWORD };
const target = { ...source, name: `${testEnv.DB_NAME}_restore` };
const s3Target = { ...source, name: `${testEnv.DB_NAME}_restore_s3` };
const dropTarget = async () => {
  const conn = await mariadb.createConnection({ host: source.host, port: source.port, user: source.user, password: source.password });
  for (const db of [target, s3Target]) await conn.query(`DROP DATABASE IF EXISTS \`${db.name}\``);
  await conn.end();
};
let manifest: Manifest;
let uploaded: string;

beforeAll(async () => {
  await dropTarget();
  const lab = await labWithMembers();
  const tiff = await writeTiff([Uint16Array.from({ length: 32 * 24 }, (_, i) => (i * 17) % 4096)], { width: 32, height: 24, bitsPerSample: 16 });
  const done = await uploadFile(lab.editor, lab.labId, tiff, { fileName: "backed-up.tif", dimensions: { sizeC: 1, sizeZ: 1, sizeT: 1, order: "XYCZT" } });
  expect((await waitForIngest(lab.editor, done.body.datasetId)).dataset.status).toBe("ready");
  uploaded = sha256(tiff);
  manifest = await backup({ outDir: join(work, "backup"), db: source, storage: { STORAGE_DRIVER: "local", STORAGE_DIR: testEnv.STORAGE_DIR } });
}, 120_000);

afterAll(async () => {
  await dropTarget();
  rmSync(work, { recursive: true, force: true });
  await closeDb();
});

describe("backup and restore", () => {
  it("writes a manifest with the row count of every table and a checksum of every object", () => {
    expect(manifest.database.rowCounts.datasets).toBeGreaterThan(0);
    expect(manifest.database.rowCounts.users).toBeGreaterThan(0);
    expect(Object.keys(manifest.database.rowCounts)).toEqual(expect.arrayContaining(["labs", "memberships", "planes", "view_links", "schema_migrations"]));
    expect(manifest.blobs.map((b) => b.sha256)).toContain(uploaded);
    // Each checksum is of the file as written (recomputed here with Node's own hash).
    for (const blob of manifest.blobs.slice(0, 20)) expect(sha256(readFileSync(join(work, "backup", blob.file)))).toBe(blob.sha256);
  });

  it("refuses a damaged backup and writes nothing", async () => {
    const copy = join(work, "damaged");
    await backup({ outDir: copy, db: source, storage: { STORAGE_DRIVER: "local", STORAGE_DIR: testEnv.STORAGE_DIR } });
    const victim = JSON.parse(readFileSync(join(copy, "manifest.json"), "utf8")).blobs.find((b: { sha256: string }) => b.sha256 === uploaded);
    writeFileSync(join(copy, victim.file), "not the original");
    await expect(restore({ fromDir: copy, db: target, storage: { STORAGE_DRIVER: "local", STORAGE_DIR: join(work, "blobs-damaged") } })).rejects.toThrow(/damaged[\s\S]*checksum differs/);
    const conn = await mariadb.createConnection({ host: source.host, port: source.port, user: source.user, password: source.password });
    const [row] = await conn.query("SELECT COUNT(*) AS n FROM information_schema.schemata WHERE schema_name = ?", [target.name]);
    await conn.end();
    expect(Number(row.n)).toBe(0);
  });

  it("restores into an empty database and store: every table's rows and every dataset's original as before", async () => {
    const blobs = join(work, "blobs-restored");
    const result = await restore({ fromDir: join(work, "backup"), db: target, storage: { STORAGE_DRIVER: "local", STORAGE_DIR: blobs } });
    expect(result.tables).toBe(Object.keys(manifest.database.rowCounts).length);
    expect(result.objects).toBe(manifest.blobs.length);
    expect(result.datasets).toBe(manifest.database.rowCounts.datasets);
    // The uploaded original, read back from the restored store, is byte for byte the file.
    const entry = manifest.blobs.find((b) => b.sha256 === uploaded)!;
    expect(sha256(readFileSync(join(blobs, entry.key)))).toBe(uploaded);
  });

  it("refuses to restore over a database that is not empty", async () => {
    await expect(restore({ fromDir: join(work, "backup"), db: target, storage: { STORAGE_DRIVER: "local", STORAGE_DIR: join(work, "blobs-again") } })).rejects.toThrow(RestoreError);
  });
});

// The same backup restored into an S3 bucket (s3rver, a fake S3 server on loopback; its documented
// default credentials), then backed up again from that bucket: the blob store may be either driver
// on either side, and the objects and their checksums come through unchanged.
describe("backup and restore with the S3 driver", () => {
  const BUCKET = "fluxframe-backup-test";
  let server: S3rver;
  let s3dir = "";
  let s3: Record<string, string>;

  beforeAll(async () => {
    s3dir = mkdtempSync(join(tmpdir(), "fluxframe-backup-s3rver-"));
    server = new S3rver({ address: "127.0.0.1", port: 0, silent: true, directory: s3dir, configureBuckets: [{ name: BUCKET }] });
    const { port } = await server.run();
    s3 = {
      STORAGE_DRIVER: "s3",
      S3_ENDPOINT: `http://127.0.0.1:${port}`,
      S3_REGION: "us-east-1",
      S3_BUCKET: BUCKET,
      S3_ACCESS_KEY_ID: "S3RVER",
      S3_SECRET_ACCESS_KEY: "S3RVER",
      S3_FORCE_PATH_STYLE: "1",
    };
  });

  afterAll(async () => {
    await server?.close();
    rmSync(s3dir, { recursive: true, force: true });
  });

  it("restores into an empty bucket, and a backup taken from it has every object with the same checksum", async () => {
    const result = await restore({ fromDir: join(work, "backup"), db: s3Target, storage: s3 });
    expect(result.objects).toBe(manifest.blobs.length);
    const again = await backup({ outDir: join(work, "backup-from-s3"), db: s3Target, storage: s3 });
    const objects = (m: Manifest) => m.blobs.map((b) => `${b.key} ${b.bytes} ${b.sha256}`).sort();
    expect(objects(again)).toEqual(objects(manifest));
    expect(again.blobs.map((b) => b.sha256)).toContain(uploaded);
    expect(again.database.rowCounts).toEqual(manifest.database.rowCounts);
    // A bucket that already holds objects is refused, as a non-empty folder is.
    const fresh = { ...s3Target, name: `${s3Target.name}_x` };
    await expect(restore({ fromDir: join(work, "backup"), db: fresh, storage: s3 })).rejects.toThrow(/blob store is not empty/);
    // …before anything was created: the database it would have restored into does not exist.
    const conn = await mariadb.createConnection({ host: source.host, port: source.port, user: source.user, password: source.password });
    const [row] = await conn.query("SELECT COUNT(*) AS n FROM information_schema.schemata WHERE schema_name = ?", [fresh.name]);
    await conn.end();
    expect(Number(row.n)).toBe(0);
  }, 120_000);
});
