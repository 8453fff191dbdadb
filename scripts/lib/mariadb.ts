// A private MariaDB instance for this project: data under .data/mariadb-<port>, listening on
// 127.0.0.1 only, started detached and reused when already running (PLATFORM.md, "MariaDB on loopback").
import { spawn, spawnSync } from "node:child_process";
import { createHash } from "node:crypto";
import { existsSync, mkdirSync, readFileSync } from "node:fs";
import { join } from "node:path";
import mariadb from "mariadb";
import type { DbSettings } from "./env";
import { root } from "./env";
import { ensureDebianPackages, findExecutable } from "./system";

export interface Instance {
  port: number;
  dataDir: string;
  socket: string;
  pidFile: string;
  logFile: string;
}

export function instanceFor(port: number): Instance {
  const base = join(root, ".data", `mariadb-${port}`);
  // Unix socket paths are limited to ~107 bytes, and CI may clone into a deep folder: keep it in /tmp.
  const tag = createHash("sha1").update(root).digest("hex").slice(0, 10);
  return {
    port,
    dataDir: join(base, "data"),
    socket: `/tmp/fluxframe-${tag}-${port}.sock`,
    pidFile: join(base, "mariadbd.pid"),
    logFile: join(base, "mariadbd.err"),
  };
}

/** A root connection over the instance's Unix socket (also used for the Galera nodes). */
export function rootConnection(instance: { socket: string }) {
  return mariadb.createConnection({ socketPath: instance.socket, user: "root", connectTimeout: 1000 });
}

/** The last lines of a server's error log, for a message saying why it did not start. */
export function logTail(file: string, lines = 15): string {
  return existsSync(file) ? readFileSync(file, "utf8").split("\n").slice(-lines).join("\n") : "(no log)";
}

async function alive(instance: Instance): Promise<boolean> {
  if (!existsSync(instance.socket)) return false;
  try {
    const conn = await rootConnection(instance);
    await conn.end();
    return true;
  } catch {
    return false;
  }
}

function ensureInstalled(): { server: string; installDb: string } {
  let server = findExecutable("mariadbd");
  let installDb = findExecutable("mariadb-install-db");
  if (!server || !installDb) {
    ensureDebianPackages(["mariadb-server"], "Fluxframe's database");
    server = findExecutable("mariadbd");
    installDb = findExecutable("mariadb-install-db");
  }
  if (!server || !installDb) throw new Error("mariadbd is still missing after installing mariadb-server");
  return { server, installDb };
}

export async function startMariaDb(port: number): Promise<Instance> {
  const instance = instanceFor(port);
  if (await alive(instance)) return instance;
  const { server, installDb } = ensureInstalled();
  const asRoot = process.getuid?.() === 0 ? ["--user=root"] : [];

  if (!existsSync(join(instance.dataDir, "mysql"))) {
    mkdirSync(instance.dataDir, { recursive: true });
    console.log(`» Initialising MariaDB data directory ${instance.dataDir}`);
    const init = spawnSync(
      installDb,
      [
        "--no-defaults",
        `--datadir=${instance.dataDir}`,
        ...asRoot,
        "--auth-root-authentication-method=normal",
        "--skip-test-db",
      ],
      { encoding: "utf8" },
    );
    if (init.status !== 0) throw new Error(`mariadb-install-db failed:\n${init.stdout}\n${init.stderr}`);
  }

  console.log(`» Starting MariaDB on 127.0.0.1:${port}`);
  const child = spawn(
    server,
    [
      "--no-defaults",
      `--datadir=${instance.dataDir}`,
      `--socket=${instance.socket}`,
      `--port=${port}`,
      "--bind-address=127.0.0.1",
      ...asRoot,
      `--pid-file=${instance.pidFile}`,
      `--log-error=${instance.logFile}`,
      "--skip-name-resolve",
      "--character-set-server=utf8mb4",
      "--collation-server=utf8mb4_unicode_ci",
      "--default-time-zone=+00:00",
    ],
    { detached: true, stdio: "ignore" },
  );
  child.unref();

  const deadline = Date.now() + 30_000;
  while (Date.now() < deadline) {
    if (await alive(instance)) return instance;
    if (child.exitCode !== null) break;
    await new Promise((r) => setTimeout(r, 100));
  }
  throw new Error(`MariaDB did not become ready on port ${port}. Last lines of ${instance.logFile}:\n${logTail(instance.logFile)}`);
}

export async function stopMariaDb(port: number): Promise<boolean> {
  const instance = instanceFor(port);
  if (!(await alive(instance))) return false;
  const conn = await rootConnection(instance);
  // The server kills this very connection as it shuts down; that error is the expected outcome.
  conn.on("error", () => undefined);
  await conn.query("SHUTDOWN").catch(() => undefined);
  await conn.end().catch(() => undefined);
  const deadline = Date.now() + 30_000;
  while (Date.now() < deadline && existsSync(instance.socket)) await new Promise((r) => setTimeout(r, 100));
  return true;
}

/** Creates the application's login and database (idempotent); with `fresh`, empties the database first. */
export async function prepareDatabase(instance: Instance, db: DbSettings, options: { fresh?: boolean } = {}) {
  const conn = await rootConnection(instance);
  try {
    const name = conn.escapeId(db.name);
    if (options.fresh) await conn.query(`DROP DATABASE IF EXISTS ${name}`);
    await conn.query(`CREATE DATABASE IF NOT EXISTS ${name} CHARACTER SET utf8mb4 COLLATE utf8mb4_unicode_ci`);
    for (const host of ["127.0.0.1", "localhost"]) {
      await conn.query(`CREATE USER IF NOT EXISTS ?@? IDENTIFIED BY ?`, [db.user, host, db.password]);
      await conn.query(`ALTER USER ?@? IDENTIFIED BY ?`, [db.user, host, db.password]);
      // The app's login may create scratch databases named after its own (used by migration tests).
      await conn.query(`GRANT ALL PRIVILEGES ON \`${db.name.replace(/[`_%]/g, (c) => (c === "`" ? "" : `\\${c}`))}%\`.* TO ?@?`, [db.user, host]);
    }
  } finally {
    await conn.end();
  }
}
