// Backup and restore of one Fluxframe installation: a consistent MariaDB dump (one transaction,
// `mariadb-dump --single-transaction`) plus every object of the blob store (local folder or S3
// bucket), with a manifest of SHA-256 checksums and row counts. Restore refuses a damaged backup or a
// database that is not empty, loads the dump, copies the objects, and checks every dataset's
// original against its recorded SHA-256 and every table's row count against the manifest.
import { spawn } from "node:child_process";
import { createReadStream, createWriteStream, existsSync, mkdirSync, readFileSync, writeFileSync } from "node:fs";
import { dirname, join } from "node:path";
import { createInterface } from "node:readline";
import { pipeline } from "node:stream/promises";
import mariadb from "mariadb";
import { storeFromEnv } from "../../lib/server/storage";
import { sha256OfStream } from "../../lib/server/storage/blob-store";
import type { DbSettings } from "./env";
import { findExecutable } from "./system";

export const MANIFEST_FORMAT = "fluxframe-backup";
export const MANIFEST_VERSION = 1;

export interface Manifest {
  format: typeof MANIFEST_FORMAT;
  version: typeof MANIFEST_VERSION;
  createdAt: string;
  database: { name: string; dumpFile: string; dumpSha256: string; rowCounts: Record<string, number> };
  blobs: { key: string; file: string; bytes: number; sha256: string }[];
}

type StorageEnv = Record<string, string | undefined>;

const sha256File = (path: string) => sha256OfStream(createReadStream(path));

function run(command: string, args: string[], options: { env?: Record<string, string>; stdinFile?: string; stdoutFile?: string }): Promise<void> {
  return new Promise((resolvePromise, reject) => {
    const child = spawn(command, args, { env: { ...process.env, ...options.env }, stdio: ["pipe", "pipe", "pipe"] });
    let stderr = "";
    child.stderr.on("data", (d) => (stderr += String(d)));
    if (options.stdoutFile) child.stdout.pipe(createWriteStream(options.stdoutFile));
    else child.stdout.resume();
    if (options.stdinFile) createReadStream(options.stdinFile).pipe(child.stdin);
    else child.stdin.end();
    child.on("error", reject);
    child.on("close", (code) => (code === 0 ? resolvePromise() : reject(new Error(`${command} exited with ${code}: ${stderr.trim()}`))));
  });
}

const client = (name: string) => {
  const found = findExecutable(name);
  if (!found) throw new Error(`${name} was not found; it comes with Debian's mariadb-client (installed with mariadb-server by npm start).`);
  return found;
};

async function rowCounts(db: DbSettings): Promise<Record<string, number>> {
  const conn = await mariadb.createConnection({ host: db.host, port: db.port, user: db.user, password: db.password, database: db.name });
  try {
    // One consistent snapshot for all counts.
    await conn.query("SET TRANSACTION ISOLATION LEVEL REPEATABLE READ");
    await conn.query("START TRANSACTION WITH CONSISTENT SNAPSHOT");
    const tables = (await conn.query("SELECT table_name AS name FROM information_schema.tables WHERE table_schema = ? AND table_type = 'BASE TABLE' ORDER BY table_name", [db.name])) as { name: string }[];
    const counts: Record<string, number> = {};
    for (const { name } of tables) {
      const [row] = (await conn.query(`SELECT COUNT(*) AS n FROM ${conn.escapeId(name)}`)) as { n: bigint | number }[];
      counts[name] = Number(row.n);
    }
    await conn.query("COMMIT");
    return counts;
  } finally {
    await conn.end();
  }
}

/** Rows per table in a dump written with one INSERT per row (tables without rows count 0). */
export async function countsInDump(path: string): Promise<Record<string, number>> {
  const counts: Record<string, number> = {};
  const lines = createInterface({ input: createReadStream(path), crlfDelay: Infinity });
  for await (const line of lines) {
    const created = /^CREATE TABLE `([^`]+)`/.exec(line);
    if (created) counts[created[1]] ??= 0;
    const inserted = /^INSERT INTO `([^`]+)` VALUES /.exec(line);
    if (inserted) counts[inserted[1]] = (counts[inserted[1]] ?? 0) + 1;
  }
  return counts;
}

/** Writes a backup of the database and the blob store into `outDir` (which must not exist yet). */
export async function backup(options: { outDir: string; db: DbSettings; storage: StorageEnv; log?: (line: string) => void }): Promise<Manifest> {
  const log = options.log ?? (() => undefined);
  if (existsSync(options.outDir)) throw new Error(`${options.outDir} already exists; choose a new folder for the backup.`);
  mkdirSync(join(options.outDir, "blobs"), { recursive: true });
  const dumpFile = "database.sql";
  log("» Dumping the database (one consistent transaction)…");
  await run(
    client("mariadb-dump"),
    // One INSERT per row (--skip-extended-insert): the dump's own row counts can then be read from it,
    // and they are the counts of the dump's single consistent snapshot, whatever is written meanwhile.
    ["--single-transaction", "--skip-lock-tables", "--hex-blob", "--skip-extended-insert", `--host=${options.db.host}`, `--port=${options.db.port}`, `--user=${options.db.user}`, options.db.name],
    // The password goes through the environment, not the command line (visible to other users).
    { env: { MYSQL_PWD: options.db.password }, stdoutFile: join(options.outDir, dumpFile) },
  );
  const counts = await countsInDump(join(options.outDir, dumpFile));
  const store = storeFromEnv(options.storage);
  const keys = await store.list("");
  log(`» Copying ${keys.length} stored objects…`);
  const blobs: Manifest["blobs"] = [];
  for (const [i, key] of keys.entries()) {
    const file = join("blobs", key);
    mkdirSync(dirname(join(options.outDir, file)), { recursive: true });
    await pipeline(await store.get(key), createWriteStream(join(options.outDir, file)));
    const sha256 = await sha256File(join(options.outDir, file));
    const bytes = readFileSync(join(options.outDir, file)).length;
    blobs.push({ key, file, bytes, sha256 });
    if ((i + 1) % 50 === 0) log(`  ${i + 1}/${keys.length}`);
  }
  const manifest: Manifest = {
    format: MANIFEST_FORMAT,
    version: MANIFEST_VERSION,
    createdAt: new Date().toISOString(),
    database: { name: options.db.name, dumpFile, dumpSha256: await sha256File(join(options.outDir, dumpFile)), rowCounts: counts },
    blobs,
  };
  writeFileSync(join(options.outDir, "manifest.json"), JSON.stringify(manifest, null, 2) + "\n");
  log(`» Backup written to ${options.outDir}: ${Object.keys(counts).length} tables, ${blobs.length} objects.`);
  return manifest;
}

export class RestoreError extends Error {}

/** Checks every file of a backup against its manifest; returns the manifest or throws with each problem named. */
export async function verifyBackup(dir: string): Promise<Manifest> {
  const path = join(dir, "manifest.json");
  if (!existsSync(path)) throw new RestoreError(`${dir} has no manifest.json; it is not a Fluxframe backup.`);
  const manifest = JSON.parse(readFileSync(path, "utf8")) as Manifest;
  if (manifest.format !== MANIFEST_FORMAT || manifest.version !== MANIFEST_VERSION) throw new RestoreError(`Unknown backup format ${manifest.format} v${manifest.version}.`);
  const problems: string[] = [];
  if ((await sha256File(join(dir, manifest.database.dumpFile))) !== manifest.database.dumpSha256) problems.push(`${manifest.database.dumpFile}: checksum differs`);
  for (const blob of manifest.blobs) {
    const file = join(dir, blob.file);
    if (!existsSync(file)) problems.push(`${blob.file}: missing`);
    else if ((await sha256File(file)) !== blob.sha256) problems.push(`${blob.file}: checksum differs`);
  }
  if (problems.length) throw new RestoreError(`The backup is damaged; nothing was restored:\n  ${problems.join("\n  ")}`);
  return manifest;
}

/**
 * Restores a backup into an empty database and an empty blob store, then checks the result: row
 * counts as in the manifest, and every dataset's stored original hashing to its recorded SHA-256.
 */
export async function restore(options: { fromDir: string; db: DbSettings; storage: StorageEnv; log?: (line: string) => void }): Promise<{ tables: number; objects: number; datasets: number }> {
  const log = options.log ?? (() => undefined);
  const manifest = await verifyBackup(options.fromDir);
  // Both targets are checked before anything is created, so a refusal leaves nothing behind.
  const store = storeFromEnv(options.storage);
  if ((await store.list("")).length > 0) throw new RestoreError("The blob store is not empty; restore only into an empty one.");
  const conn = await mariadb.createConnection({ host: options.db.host, port: options.db.port, user: options.db.user, password: options.db.password });
  try {
    await conn.query(`CREATE DATABASE IF NOT EXISTS ${conn.escapeId(options.db.name)} CHARACTER SET utf8mb4 COLLATE utf8mb4_unicode_ci`);
    const [row] = (await conn.query("SELECT COUNT(*) AS n FROM information_schema.tables WHERE table_schema = ?", [options.db.name])) as { n: bigint }[];
    if (Number(row.n) > 0) throw new RestoreError(`Database ${options.db.name} is not empty; restore only into an empty one.`);
  } finally {
    await conn.end();
  }

  log("» Loading the database dump…");
  await run(client("mariadb"), [`--host=${options.db.host}`, `--port=${options.db.port}`, `--user=${options.db.user}`, options.db.name], {
    env: { MYSQL_PWD: options.db.password },
    stdinFile: join(options.fromDir, manifest.database.dumpFile),
  });
  log(`» Copying ${manifest.blobs.length} objects…`);
  for (const blob of manifest.blobs) {
    const written = await store.put(blob.key, createReadStream(join(options.fromDir, blob.file)));
    if (written.sha256 !== blob.sha256) throw new RestoreError(`${blob.key}: stored with a different checksum`);
  }

  const counts = await rowCounts(options.db);
  const mismatched = Object.entries(manifest.database.rowCounts).filter(([table, n]) => counts[table] !== n);
  if (mismatched.length) throw new RestoreError(`Row counts differ after restore: ${mismatched.map(([t, n]) => `${t} ${counts[t]} ≠ ${n}`).join(", ")}`);
  const check = await mariadb.createConnection({ host: options.db.host, port: options.db.port, user: options.db.user, password: options.db.password, database: options.db.name });
  let datasets: { id: number; blob_key: string; sha256: string }[];
  try {
    datasets = (await check.query("SELECT id, blob_key, sha256 FROM datasets")) as typeof datasets;
  } finally {
    await check.end();
  }
  for (const d of datasets) {
    const actual = await sha256OfStream(await store.get(d.blob_key));
    if (actual !== d.sha256) throw new RestoreError(`Dataset ${d.id}: its original hashes to ${actual}, expected ${d.sha256}`);
  }
  log(`» Restored ${Object.keys(counts).length} tables and ${manifest.blobs.length} objects; ${datasets.length} dataset originals match their SHA-256.`);
  return { tables: Object.keys(counts).length, objects: manifest.blobs.length, datasets: datasets.length };
}
