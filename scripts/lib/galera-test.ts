// The Galera fault test behind `npm run cluster:test` (scripts/cluster-test.ts): a three-node cluster
// on loopback, one production app server whose DB_HOSTS lists all three nodes, several clients
// creating labs as fast as they can, and two node failures during the writes: first the node the app
// writes to is killed (SIGKILL, like a power cut), later another node is shut down cleanly. Each is
// restarted while the writes go on and must rejoin with all the data. Every write the server
// acknowledged (201 with the new lab's id) must be on every node afterwards, and on the surviving
// nodes while a node is down. Clients may see 503 + Retry-After while the app moves to another node,
// never a 500 or a dropped connection.
import { join } from "node:path";
import { testEnv } from "../../tests/setup/test-env";
import { Client } from "../../tests/helpers/http";
import { startAppServer, type AppServer } from "./app-server";
import { buildIfNeeded } from "./build";
import { dbSettings } from "./env";
import { GALERA_NODES, clusterAppPort, clusterDir, dbHostsValue, nodeFor, nodeStatus, portsFor, startCluster, startNode, stopCluster, stopNode, waitForClusterSize } from "./galera";
import { prepareDatabase, rootConnection } from "./mariadb";

export interface GaleraTestSummary {
  acknowledged: number;
  attempts: number;
  /** Acknowledged writes missing on some node, per check. */
  lost: { check: string; node: number; missing: number }[];
  checks: { check: string; node: number; present: number; expected: number }[];
  /** Non-2xx answers and failed requests, keyed "503 unavailable", "500 internal", "network", … */
  clientErrors: Record<string, number>;
  /** The same, per phase of the test ("node 1 killed", …). */
  clientErrorsByPhase: Record<string, Record<string, number>>;
  /** The app's open connections per node at each check. */
  appConnectionsAt: { check: string; perNode: Record<number, number> }[];
  badErrors: number;
  /** Tables Galera cannot replicate safely: not InnoDB, or without a primary key (should be none). */
  unfitTables: string[];
  /** Rows written whose answer was an error (the commit happened, the reply did not arrive): informational. */
  unacknowledgedButStored: number;
  events: { at: number; what: string }[];
  seconds: number;
  passed: boolean;
}

const log = (text: string) => console.log(`  ${text}`);
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/** How many connections the app's login holds on node n: shows which node the app is using. */
async function appConnections(n: number, user: string): Promise<number> {
  const conn = await rootConnection(nodeFor(n));
  try {
    const rows = (await conn.query("SELECT COUNT(*) AS c FROM information_schema.PROCESSLIST WHERE USER = ?", [user])) as { c: number | bigint }[];
    return Number(rows[0].c);
  } finally {
    await conn.end();
  }
}

/**
 * Galera replicates InnoDB tables only, and rows of a table without a primary key cannot be matched
 * reliably on the other nodes (MariaDB documentation, "Galera Cluster Known Limitations").
 */
async function tablesGaleraCannotReplicate(database: string): Promise<string[]> {
  const conn = await rootConnection(nodeFor(1));
  try {
    const rows = (await conn.query(
      `SELECT t.TABLE_NAME AS name, t.ENGINE AS engine FROM information_schema.TABLES t
       LEFT JOIN information_schema.TABLE_CONSTRAINTS c
         ON c.TABLE_SCHEMA = t.TABLE_SCHEMA AND c.TABLE_NAME = t.TABLE_NAME AND c.CONSTRAINT_TYPE = 'PRIMARY KEY'
       WHERE t.TABLE_SCHEMA = ? AND t.TABLE_TYPE = 'BASE TABLE' AND (c.CONSTRAINT_NAME IS NULL OR t.ENGINE <> 'InnoDB')`,
      [database],
    )) as { name: string; engine: string }[];
    return rows.map((r) => `${r.name} (${r.engine})`);
  } finally {
    await conn.end();
  }
}

async function labsOnNode(n: number, database: string, prefix: string): Promise<Map<number, string>> {
  const conn = await rootConnection(nodeFor(n));
  try {
    const rows = (await conn.query(`SELECT id, name FROM ${conn.escapeId(database)}.labs WHERE name LIKE ?`, [`${prefix}%`])) as { id: number; name: string }[];
    return new Map(rows.map((r) => [Number(r.id), r.name]));
  } finally {
    await conn.end();
  }
}

/**
 * `fresh`: rebuild the cluster's data folders first. `build: false` uses the production build as it
 * is (the server tests' global set-up has just made it; rebuilding because another file changed
 * since would only cost minutes).
 */
export async function runGaleraTest(options: { fresh?: boolean; build?: boolean; writers?: number; appPort?: number } = {}): Promise<GaleraTestSummary> {
  const started = Date.now();
  const at = () => Math.round((Date.now() - started) / 100) / 10;
  const appPort = options.appPort ?? clusterAppPort();
  const database = "fluxframe_galera";
  const env: Record<string, string> = {
    ...testEnv,
    DB_HOST: "127.0.0.1",
    DB_PORT: String(portsFor(1).sql),
    DB_HOSTS: dbHostsValue(),
    DB_NAME: database,
    APP_PORT: String(appPort),
    NEXTAUTH_URL: `http://localhost:${appPort}`,
    STORAGE_DIR: join(clusterDir(), "blobs"),
    OUTBOX_DIR: join(clusterDir(), "outbox"),
    NEXT_DIST_DIR: process.env.NEXT_DIST_DIR || testEnv.NEXT_DIST_DIR || ".next",
    // Fail fast on a dead node rather than holding a request for the default 20 s.
    DB_POOL_ACQUIRE_MS: "8000",
  };
  Object.assign(process.env, env);
  const events: GaleraTestSummary["events"] = [];
  const event = (what: string) => {
    events.push({ at: at(), what });
    log(`[${at().toFixed(1)} s] ${what}`);
  };

  let app: AppServer | undefined;
  const acknowledged = new Map<number, string>();
  const failedNames = new Set<string>();
  const clientErrors: Record<string, number> = {};
  const clientErrorsByPhase: Record<string, Record<string, number>> = {};
  const appConnectionsAt: GaleraTestSummary["appConnectionsAt"] = [];
  let phase = "all nodes up";
  const countError = (key: string) => {
    clientErrors[key] = (clientErrors[key] ?? 0) + 1;
    const bucket = (clientErrorsByPhase[phase] ??= {});
    bucket[key] = (bucket[key] ?? 0) + 1;
  };
  const checks: GaleraTestSummary["checks"] = [];
  const lost: GaleraTestSummary["lost"] = [];
  let attempts = 0;
  let unfitTables: string[] = [];
  let unacknowledgedButStored = 0;
  const prefix = `galera-${Date.now().toString(36)}-`;

  const check = async (label: string, nodes: number[]) => {
    const expected = new Map(acknowledged);
    const perNode: Record<number, number> = {};
    for (const n of nodes) perNode[n] = await appConnections(n, env.DB_USER);
    appConnectionsAt.push({ check: label, perNode });
    log(`app connections per node: ${nodes.map((n) => `node ${n}: ${perNode[n]}`).join(", ")}`);
    for (const n of nodes) {
      const rows = await labsOnNode(n, database, prefix);
      let present = 0;
      for (const [id, name] of expected) if (rows.get(id) === name) present++;
      checks.push({ check: label, node: n, present, expected: expected.size });
      if (present !== expected.size) lost.push({ check: label, node: n, missing: expected.size - present });
      log(`check "${label}" on node ${n}: ${present}/${expected.size} acknowledged writes present`);
    }
  };

  try {
    event("starting the three-node cluster");
    await startCluster({ fresh: options.fresh });
    event(`cluster up: ${dbHostsValue()}`);
    await prepareDatabase(nodeFor(1), dbSettings(), { fresh: true });
    const { db, closeDb } = await import("../../lib/server/db");
    const { migrateUp } = await import("../../lib/server/migrate");
    await migrateUp(db().sequelize);
    await closeDb();
    event("fresh database migrated on the cluster");
    unfitTables = await tablesGaleraCannotReplicate(database);
    if (unfitTables.length) event(`tables Galera cannot replicate safely: ${unfitTables.join(", ")}`);
    if (options.build !== false) buildIfNeeded();
    app = await startAppServer({ port: appPort, mode: "start", env, quiet: true });
    event(`app server up on ${app.url} with DB_HOSTS=${env.DB_HOSTS}`);

    const email = `${prefix}owner@example.test`;
    const password = "galera-test-password";
    const first = new Client();
    first.base = app.url;
    const signedUp = await first.post("/api/account/signup", { name: "Galera tester", email, password });
    if (signedUp.status !== 201) throw new Error(`sign-up answered ${signedUp.status}: ${JSON.stringify(signedUp.body)}`);
    const clients: Client[] = [];
    for (let k = 0; k < (options.writers ?? 4); k++) {
      const c = new Client();
      c.base = app.url;
      if (!(await c.signIn(email, password))) throw new Error("sign-in failed");
      clients.push(c);
    }

    let writing = true;
    const writer = async (c: Client, k: number) => {
      for (let i = 0; writing; i++) {
        const name = `${prefix}w${k}-${i}`;
        attempts++;
        try {
          const reply = await c.post("/api/labs", { name });
          if (reply.status === 201 && reply.body?.lab?.id) {
            acknowledged.set(Number(reply.body.lab.id), name);
            continue;
          }
          failedNames.add(name);
          const code = reply.body?.error?.code ?? "";
          const retryAfter = reply.headers.get("retry-after");
          const key = `${reply.status} ${code}${reply.status === 503 && !retryAfter ? " (no Retry-After)" : ""}`;
          countError(key);
          // A client honours Retry-After, briefly (the test keeps the pause short to keep writing).
          await sleep(reply.status === 503 ? 200 : 50);
        } catch (error) {
          failedNames.add(name);
          const key = `network ${(error as Error).message}`;
          countError(key);
          await sleep(200);
        }
      }
    };
    const writers = clients.map((c, k) => writer(c, k));

    await sleep(3000);
    event(`writing: ${acknowledged.size} acknowledged so far; killing node 1 (SIGKILL), the node the app writes to`);
    // One node down (killed, or shut down cleanly) while writes go on, then back: each time the
    // other two must form the cluster, lose no acknowledged write, and take the node back in.
    const outage = async (node: number, mode: "kill" | "clean", what: string) => {
      phase = what;
      await stopNode(node, mode);
      await sleep(1000);
      const others = GALERA_NODES.filter((n) => n !== node);
      await waitForClusterSize(2, others, 20_000);
      event(`nodes ${others.join(" and ")} form the cluster (size 2); ${acknowledged.size} acknowledged so far`);
      await check(what, others);
      event(`restarting node ${node} (it rejoins and catches up while writes go on)`);
      phase = `node ${node} rejoining`;
      await startNode(node);
      await waitForClusterSize(3, [...GALERA_NODES], 60_000);
      event(`node ${node} is back and synced; ${acknowledged.size} acknowledged so far`);
    };
    await outage(1, "kill", "node 1 killed");
    phase = "all nodes up again";
    await sleep(2000);
    event("shutting node 2 down cleanly (SIGTERM)");
    await outage(2, "clean", "node 2 shut down");
    phase = "all nodes up at the end";
    await sleep(2000);
    writing = false;
    await Promise.all(writers);
    event(`writes stopped: ${attempts} attempts, ${acknowledged.size} acknowledged`);
    await check("after both restarts", [...GALERA_NODES]);
    const stored = await labsOnNode(1, database, prefix);
    for (const name of stored.values()) if (failedNames.has(name)) unacknowledgedButStored++;
    if (app.child.exitCode !== null) clientErrors["app server exited"] = 1;
  } finally {
    await app?.stop();
    event("stopping the cluster");
    await stopCluster();
  }

  const badErrors = Object.entries(clientErrors)
    .filter(([key]) => !/^503 unavailable$/.test(key))
    .reduce((sum, [, count]) => sum + count, 0);
  const passed = lost.length === 0 && badErrors === 0 && acknowledged.size > 0 && unfitTables.length === 0;
  return { acknowledged: acknowledged.size, attempts, lost, checks, clientErrors, clientErrorsByPhase, appConnectionsAt, badErrors, unfitTables, unacknowledgedButStored, events, seconds: at(), passed };
}

/** Status of all nodes in one line, for messages. */
export async function clusterLine(): Promise<string> {
  const parts = [];
  for (const n of GALERA_NODES) {
    const s = await nodeStatus(nodeFor(n));
    parts.push(`node ${n}: ${s ? `${s.state} size ${s.clusterSize}` : "down"}`);
  }
  return parts.join("; ");
}
