// A three-node MariaDB Galera cluster on loopback for trying Fluxframe on more than one database
// machine (issue 7). Debian's galera-4 provider, state transfer with rsync, every node on 127.0.0.1
// with its own SQL, group-communication (gcomm), IST and SST ports, data under .data/galera/node-<n> (per TEST_SLOT, see portsFor).
// Node 1 bootstraps the cluster (--wsrep-new-cluster); nodes 2 and 3 join it and receive a full copy.
// Each node gets a written option file (my.cnf beside its data), so the same settings can be read,
// copied to real machines (change the addresses) and are what the SST script reads too.
import { spawn, spawnSync } from "node:child_process";
import { createHash } from "node:crypto";
import { existsSync, mkdirSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { root } from "./env";
import { logTail, rootConnection, type Instance } from "./mariadb";
import { ensureDebianPackages, findExecutable, waitForExit } from "./system";

export const GALERA_PROVIDER = "/usr/lib/galera/libgalera_smm.so";
export const GALERA_NODES = [1, 2, 3] as const;
export type NodeNumber = (typeof GALERA_NODES)[number];

/**
 * TEST_SLOT (tests/setup/test-env.ts) gives each person or agent on one machine their own cluster:
 * other ports and another data folder. Slot 0 (unset) is the plain `npm run cluster:*` cluster.
 */
function slot(): number {
  return Number(process.env.TEST_SLOT || 0);
}

/**
 * Ports per node n (1..3), all on 127.0.0.1. Slot 0: SQL 3321-3323, gcomm 4571-4573, IST 4581-4583,
 * SST 4591-4593; each further slot adds 200 to the SQL ports and 100 to the others (clear of the test
 * database on 3308 and tests/helpers/separate-stack.ts's 3330-3399 and 3400-3499).
 */
export function portsFor(n: number) {
  const s = slot();
  return { sql: 3320 + 200 * s + n, gcomm: 4570 + 100 * s + n, ist: 4580 + 100 * s + n, sst: 4590 + 100 * s + n };
}

/** A free port beside the slot's SQL ports for an app server talking to the cluster (3329 for slot 0). */
export function clusterAppPort(): number {
  return 3329 + 200 * slot();
}

/** Where the slot's nodes keep their data (.data/galera, or .data/galera-test_<slot>). */
export function clusterDir(): string {
  return join(root, ".data", slot() ? `galera-test_${slot()}` : "galera");
}

export interface GaleraNode extends Instance {
  n: number;
  dir: string;
  configFile: string;
}

export function nodeFor(n: number): GaleraNode {
  const dir = join(clusterDir(), `node-${n}`);
  const ports = portsFor(n);
  // Unix socket paths are limited to ~107 bytes: keep it in /tmp, as scripts/lib/mariadb.ts does.
  const tag = createHash("sha1").update(root).digest("hex").slice(0, 10);
  return {
    n,
    port: ports.sql,
    dir,
    dataDir: join(dir, "data"),
    socket: `/tmp/fluxframe-${tag}-galera-${ports.sql}.sock`,
    pidFile: join(dir, "mariadbd.pid"),
    logFile: join(dir, "mariadbd.err"),
    configFile: join(dir, "my.cnf"),
  };
}

/** The addresses of every node's group communication port: what each node dials to find the others. */
export function clusterAddress(): string {
  return `gcomm://${GALERA_NODES.map((n) => `127.0.0.1:${portsFor(n).gcomm}`).join(",")}`;
}

/** The DB_HOSTS value for the app: every node's SQL port. */
export function dbHostsValue(): string {
  return GALERA_NODES.map((n) => `127.0.0.1:${portsFor(n).sql}`).join(",");
}

/**
 * The option file of node n. Galera needs row-based binary log events, interleaved auto-increment
 * locks and InnoDB; the rest sizes the node for a small test machine and makes a lost peer noticed
 * within a few seconds instead of the default ~15 s (evs.* timeouts).
 */
export function nodeConfig(node: GaleraNode): string {
  const ports = portsFor(node.n);
  const user = serverUser();
  return `# Fluxframe Galera node ${node.n} (written by scripts/lib/galera.ts; loopback test cluster)
[mysqld]
${user ? `user = ${user}\n` : ""}datadir = ${node.dataDir}
socket = ${node.socket}
port = ${ports.sql}
bind-address = 127.0.0.1
pid-file = ${node.pidFile}
log-error = ${node.logFile}
skip-name-resolve
character-set-server = utf8mb4
collation-server = utf8mb4_unicode_ci
default-time-zone = +00:00
innodb_buffer_pool_size = 64M
# Galera requirements
binlog_format = ROW
default_storage_engine = InnoDB
innodb_autoinc_lock_mode = 2
# Durability comes from the cluster: a write is certified on every node before COMMIT returns.
innodb_flush_log_at_trx_commit = 2
wsrep_on = ON
wsrep_provider = ${GALERA_PROVIDER}
wsrep_cluster_name = fluxframe
wsrep_cluster_address = ${clusterAddress()}
wsrep_node_name = node${node.n}
wsrep_node_address = 127.0.0.1:${ports.gcomm}
wsrep_sst_method = rsync
wsrep_sst_receive_address = 127.0.0.1:${ports.sst}
wsrep_provider_options = "gmcast.listen_addr=tcp://127.0.0.1:${ports.gcomm};ist.recv_addr=127.0.0.1:${ports.ist};gcache.size=64M;evs.keepalive_period=PT1S;evs.suspect_timeout=PT3S;evs.inactive_timeout=PT6S;evs.install_timeout=PT6S"
# Reads wait until this node has applied everything the cluster committed before them, so a
# client that moves to another node still reads its own writes.
wsrep_sync_wait = 1
`;
}

/**
 * Run as root, the nodes run as Debian's `mysql` account: the joiner's rsync daemon, started by the
 * SST script, drops root to `nobody` and could not write a root-owned data directory.
 */
function serverUser(): string | null {
  if (process.getuid?.() !== 0) return null;
  return spawnSync("id", ["-u", "mysql"]).status === 0 ? "mysql" : "root";
}

function ensureInstalled(): { server: string; installDb: string } {
  const missing = () => !findExecutable("mariadbd") || !findExecutable("mariadb-install-db") || !existsSync(GALERA_PROVIDER) || !findExecutable("rsync");
  if (missing()) ensureDebianPackages(["mariadb-server", "galera-4", "rsync"], "the Galera test cluster");
  if (missing()) throw new Error(`mariadbd, mariadb-install-db, ${GALERA_PROVIDER} or rsync is still missing after installing them`);
  return { server: findExecutable("mariadbd")!, installDb: findExecutable("mariadb-install-db")! };
}

/** wsrep status of one node, or null when it does not answer. */
export async function nodeStatus(node: GaleraNode): Promise<{ clusterSize: number; ready: boolean; state: string; primary: boolean } | null> {
  if (!existsSync(node.socket)) return null;
  try {
    const conn = await rootConnection(node);
    try {
      const rows = (await conn.query(
        "SHOW GLOBAL STATUS WHERE Variable_name IN ('wsrep_cluster_size','wsrep_ready','wsrep_local_state_comment','wsrep_cluster_status')",
      )) as { Variable_name: string; Value: string }[];
      const v = Object.fromEntries(rows.map((r) => [r.Variable_name, r.Value]));
      return { clusterSize: Number(v.wsrep_cluster_size ?? 0), ready: v.wsrep_ready === "ON", state: v.wsrep_local_state_comment ?? "", primary: v.wsrep_cluster_status === "Primary" };
    } finally {
      await conn.end();
    }
  } catch {
    return null;
  }
}

function pidOf(node: GaleraNode): number | null {
  if (!existsSync(node.pidFile)) return null;
  const pid = Number(readFileSync(node.pidFile, "utf8").trim());
  if (!pid) return null;
  try {
    process.kill(pid, 0);
    return pid;
  } catch {
    return null;
  }
}

/**
 * Starts node n (idempotent: an answering, synced node is left alone). `bootstrap` starts a new
 * cluster from this node; otherwise it joins the others. Waits until the node is Synced and ready.
 */
export async function startNode(n: number, options: { bootstrap?: boolean; timeoutMs?: number } = {}): Promise<GaleraNode> {
  const node = nodeFor(n);
  const status = await nodeStatus(node);
  if (status?.ready) return node;
  const { server, installDb } = ensureInstalled();
  mkdirSync(node.dir, { recursive: true });
  writeFileSync(node.configFile, nodeConfig(node));
  const user = serverUser();
  if (user && user !== "root") spawnSync("chown", ["-R", `${user}:${user}`, node.dir]);
  if (!existsSync(join(node.dataDir, "mysql"))) {
    mkdirSync(node.dataDir, { recursive: true });
    if (user && user !== "root") spawnSync("chown", ["-R", `${user}:${user}`, node.dir]);
    // Joiners are overwritten by the state transfer, but the server wants a data directory to start.
    const init = spawnSync(installDb, [`--defaults-file=${node.configFile}`, "--auth-root-authentication-method=normal", "--skip-test-db"], { encoding: "utf8" });
    if (init.status !== 0) throw new Error(`mariadb-install-db failed for Galera node ${n}:\n${init.stdout}\n${init.stderr}`);
  }
  const args = [`--defaults-file=${node.configFile}`];
  if (options.bootstrap) {
    args.push("--wsrep-new-cluster");
    // A cluster whose nodes were all stopped cleanly records the last one as safe to bootstrap from;
    // this test cluster always restarts from node 1, which it stops last.
    const state = join(node.dataDir, "grastate.dat");
    if (existsSync(state)) writeFileSync(state, readFileSync(state, "utf8").replace(/^safe_to_bootstrap:\s*0/m, "safe_to_bootstrap: 1"));
  }
  const child = spawn(server, args, { detached: true, stdio: "ignore" });
  child.unref();
  const deadline = Date.now() + (options.timeoutMs ?? 90_000);
  while (Date.now() < deadline) {
    const s = await nodeStatus(node);
    if (s?.ready && s.state === "Synced") return node;
    if (child.exitCode !== null) break;
    await new Promise((r) => setTimeout(r, 250));
  }
  throw new Error(`Galera node ${n} did not become ready on port ${node.port}. Last lines of ${node.logFile}:\n${logTail(node.logFile, 20)}`);
}

/** Waits until every listed node reports the given cluster size and is ready. */
export async function waitForClusterSize(size: number, nodes: number[], timeoutMs = 60_000): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  let last: unknown[] = [];
  while (Date.now() < deadline) {
    last = await Promise.all(nodes.map((n) => nodeStatus(nodeFor(n))));
    if (last.every((s) => s && (s as { clusterSize: number }).clusterSize === size && (s as { ready: boolean }).ready)) return;
    await new Promise((r) => setTimeout(r, 250));
  }
  throw new Error(`The cluster did not reach size ${size} on nodes ${nodes.join(", ")}: ${JSON.stringify(last)}`);
}

/** Starts the three-node cluster (node 1 bootstraps, 2 and 3 join one after the other). */
export async function startCluster(options: { fresh?: boolean } = {}): Promise<GaleraNode[]> {
  if (options.fresh) {
    await stopCluster();
    rmSync(clusterDir(), { recursive: true, force: true });
  }
  const first = await nodeStatus(nodeFor(1));
  const anyUp = (await Promise.all(GALERA_NODES.map((n) => nodeStatus(nodeFor(n))))).some((s) => s?.ready);
  console.log(`» Galera: starting a three-node cluster on 127.0.0.1:${GALERA_NODES.map((n) => portsFor(n).sql).join(",")}`);
  const nodes = [await startNode(1, { bootstrap: !first?.ready && !anyUp })];
  for (const n of GALERA_NODES.slice(1)) nodes.push(await startNode(n));
  await waitForClusterSize(GALERA_NODES.length, [...GALERA_NODES]);
  return nodes;
}

/**
 * Stops node n: "clean" asks it to shut down (it leaves the cluster gracefully); "kill" sends SIGKILL,
 * like a machine losing power. Waits until the process is gone.
 */
export async function stopNode(n: number, how: "clean" | "kill" = "clean"): Promise<boolean> {
  const node = nodeFor(n);
  const pid = pidOf(node);
  if (pid === null) return false;
  if (how === "kill") {
    process.kill(pid, "SIGKILL");
  } else {
    process.kill(pid, "SIGTERM");
  }
  if (await waitForExit(pid, 60_000)) {
    // A killed server leaves its socket file behind; the next start replaces it.
    if (how === "kill") rmSync(node.socket, { force: true });
    return true;
  }
  process.kill(pid, "SIGKILL");
  return true;
}

/** Stops every node, the bootstrap node last (so it is the one safe to bootstrap from next time). */
export async function stopCluster(): Promise<void> {
  for (const n of [...GALERA_NODES].reverse()) await stopNode(n, "clean");
}
