import "server-only";
import mariadb from "mariadb";
import { Sequelize } from "sequelize";
import { initModels, type Models } from "@/models";

// One Sequelize instance per process; kept on globalThis so that dev-mode reloads reuse the pool.
type Db = Models & { sequelize: Sequelize };
const holder = globalThis as typeof globalThis & { __fluxframeDb?: Db };

/** InnoDB gave up on a lock (1213 deadlock, 1205 lock wait timeout) and rolled the transaction back. */
export function isLockConflict(error: unknown): boolean {
  const e = error as { parent?: { errno?: number }; original?: { errno?: number }; errno?: number } | null;
  const errno = e?.parent?.errno ?? e?.original?.errno ?? e?.errno;
  return errno === 1213 || errno === 1205;
}

// The mariadb driver's own codes for a connection that died or never came (mariadb 3.0 lib/misc/errors.js:
// 45001 already closed, 45009 socket closed unexpectedly, 45012 connect timeout, 45019 socket error,
// 45026 socket timeout, 45028 no pool connection in time) and the server's while it goes down
// (1053 ER_SERVER_SHUTDOWN, 1927 ER_CONNECTION_KILLED, 4031 ER_CLIENT_INTERACTION_TIMEOUT).
const CONNECTION_LOSS_ERRNOS = new Set([45001, 45009, 45012, 45019, 45026, 45028, 1053, 1927, 4031]);
const CONNECTION_LOSS_CODES = new Set(["ECONNREFUSED", "ECONNRESET", "EPIPE", "ETIMEDOUT", "PROTOCOL_CONNECTION_LOST"]);

/**
 * The database went away under a query (a restart, a crash, a network cut). Sequelize wraps only
 * connect-time failures in ConnectionError; a connection lost mid-query arrives as a DatabaseError
 * whose driver error is marked fatal. Either way nothing after the loss was committed, and the same
 * request made again once the database is back is the right answer, so it is a retryable 503.
 */
export function isConnectionLoss(error: unknown): boolean {
  const e = error as { name?: string; parent?: unknown; original?: unknown } | null;
  if (!e || typeof e !== "object") return false;
  if (typeof e.name === "string" && /^Sequelize(Connection|ConnectionRefused|ConnectionAcquireTimeout|HostNotReachable|ConnectionTimedOut)Error$/.test(e.name)) return true;
  const driver = (e.parent ?? e.original) as { fatal?: boolean; errno?: number; code?: string } | undefined;
  if (!driver || typeof driver !== "object") return false;
  if (driver.fatal === true) return true;
  return (driver.errno !== undefined && CONNECTION_LOSS_ERRNOS.has(driver.errno)) || (driver.code !== undefined && CONNECTION_LOSS_CODES.has(driver.code));
}

/**
 * A Galera node that is not part of the primary component (it lost contact with the majority, or is
 * still joining) refuses every statement with 1047 "WSREP has not yet prepared node for application
 * use". Nothing was executed, so the statement is safe to run again, on that node later or on another.
 */
export function isNodeNotReady(error: unknown): boolean {
  const e = error as { parent?: { errno?: number }; original?: { errno?: number }; errno?: number } | null;
  return (e?.parent?.errno ?? e?.original?.errno ?? e?.errno) === 1047;
}

const LOCK_RETRIES = 3;

/**
 * A deadlock rolls the whole transaction back, and InnoDB's advice is to run it again. Managed
 * transactions (the callback form, which every caller here uses) are therefore retried a few times
 * with a short random pause; the callback runs again from the start on a fresh transaction.
 *
 * On a Galera cluster a certification failure (another node committed a conflicting row first) also
 * arrives as 1213 at COMMIT, with the transaction rolled back, so the same retry covers it. Two more
 * cases are retried because nothing can have been committed: a node that is not ready (1047), and a
 * connection lost while the callback was still running, before COMMIT was sent (the next attempt
 * takes a fresh connection, which DB_HOSTS may place on another node). A connection lost during
 * COMMIT itself is not retried: the commit may have happened, and running it again could write twice.
 */
export function retryTransactionsOnLockConflict(sequelize: Sequelize): Sequelize {
  const original = sequelize.transaction.bind(sequelize) as (...args: unknown[]) => Promise<unknown>;
  const wrapped = async (...args: unknown[]) => {
    if (!args.some((a) => typeof a === "function")) return original(...args);
    for (let attempt = 0; ; attempt++) {
      let committing = false;
      const attemptArgs = args.map((a) =>
        typeof a === "function"
          ? async (...cbArgs: unknown[]) => {
              const result = await (a as (...x: unknown[]) => unknown)(...cbArgs);
              committing = true;
              return result;
            }
          : a,
      );
      try {
        return await original(...attemptArgs);
      } catch (error) {
        const retryable = isLockConflict(error) || isNodeNotReady(error) || (!committing && isConnectionLoss(error));
        if (attempt >= LOCK_RETRIES || !retryable) throw error;
        await new Promise((r) => setTimeout(r, 20 + Math.random() * 80 * (attempt + 1)));
      }
    }
  };
  (sequelize as unknown as { transaction: typeof wrapped }).transaction = wrapped;
  return sequelize;
}

export interface DbHost {
  host: string;
  port: number;
}

/**
 * DB_HOSTS: a comma-separated list of host:port (a port may be left out: DB_PORT, else 3306), e.g.
 * the nodes of a Galera cluster. Empty or unset means the one server DB_HOST:DB_PORT.
 */
export function parseDbHosts(value: string | undefined, fallback: DbHost): DbHost[] {
  const hosts: DbHost[] = [];
  for (const item of (value ?? "").split(",").map((s) => s.trim()).filter(Boolean)) {
    const match = /^(\[[^\]]+\]|[^:]+)(?::(\d{1,5}))?$/.exec(item);
    if (!match) throw new Error(`DB_HOSTS: "${item}" is not host or host:port`);
    const port = match[2] === undefined ? fallback.port : Number(match[2]);
    if (!(port > 0 && port < 65536)) throw new Error(`DB_HOSTS: "${item}" has no valid port`);
    hosts.push({ host: match[1].replace(/^\[|\]$/g, ""), port });
  }
  return hosts.length ? hosts : [fallback];
}

/**
 * Several database hosts (DB_HOSTS): each new pooled connection goes to the first host that answers
 * and is ready, starting from the one that answered last, so every app process writes to one node
 * while it is up (which keeps Galera certification conflicts rare) and moves to the next one when it
 * refuses connections or reports 1047 (not in the primary component). Connections already open to a
 * node that goes away fail once and are dropped by the pool; their callers see a retryable error
 * (or a transparent retry, see retryTransactionsOnLockConflict).
 */
export function failOverAcrossHosts(sequelize: Sequelize, hosts: DbHost[]): Sequelize {
  if (hosts.length < 2) return sequelize;
  type Conn = { query(sql: string): Promise<unknown>; end(): Promise<void> };
  const manager = sequelize.connectionManager as unknown as { connect(config: Record<string, unknown>): Promise<Conn> };
  const connect = manager.connect.bind(manager);
  let preferred = 0;
  manager.connect = async (config) => {
    let lastError: unknown;
    for (let i = 0; i < hosts.length; i++) {
      const index = (preferred + i) % hosts.length;
      let connection: Conn | undefined;
      try {
        connection = await connect({ ...config, host: hosts[index].host, port: hosts[index].port });
        // A node cut off from the majority accepts connections but refuses statements with 1047.
        await connection.query("SELECT 1");
        preferred = index;
        return connection;
      } catch (error) {
        if (connection) await connection.end().catch(() => undefined);
        if (!isConnectionLoss(error) && !isNodeNotReady(error)) throw error;
        lastError = error;
      }
    }
    throw lastError;
  };
  return sequelize;
}

/** A whole number from the environment, or the default when unset or not a number ≥ `min`. */
function envInt(name: string, fallback: number, min = 0): number {
  const raw = process.env[name];
  const value = raw === undefined || raw.trim() === "" ? NaN : Number(raw);
  return Number.isInteger(value) && value >= min ? value : fallback;
}

/** Pool sizes and timeouts (DB_POOL_*, .env.example); the defaults suit one app process on a small machine. */
export function poolSettings() {
  const max = envInt("DB_POOL_MAX", 10, 1);
  return {
    max,
    min: Math.min(envInt("DB_POOL_MIN", 0), max),
    idle: envInt("DB_POOL_IDLE_MS", 10_000),
    acquire: envInt("DB_POOL_ACQUIRE_MS", 20_000, 1),
    evict: envInt("DB_POOL_EVICT_MS", 1_000, 1),
  };
}

export function createSequelize(database = process.env.DB_NAME): Sequelize {
  const fallback = { host: process.env.DB_HOST || "127.0.0.1", port: Number(process.env.DB_PORT || 3307) };
  const hosts = parseDbHosts(process.env.DB_HOSTS, fallback);
  return retryTransactionsOnLockConflict(failOverAcrossHosts(new Sequelize({
    dialect: "mariadb",
    dialectModule: mariadb,
    host: hosts[0].host,
    port: hosts[0].port,
    database,
    username: process.env.DB_USER,
    password: process.env.DB_PASSWORD,
    logging: false,
    timezone: "+00:00",
    pool: poolSettings(),
    // Transient connection faults (a database restart) are retried before a caller sees them.
    retry: { max: 3, match: [/ECONNREFUSED/, /ECONNRESET/, /SequelizeConnectionError/, /PROTOCOL_CONNECTION_LOST/] },
    dialectOptions: { connectTimeout: 5000 },
  }), hosts));
}

export function db(): Db {
  if (!holder.__fluxframeDb) {
    const sequelize = createSequelize();
    holder.__fluxframeDb = { sequelize, ...initModels(sequelize) };
  }
  return holder.__fluxframeDb;
}

export async function closeDb(): Promise<void> {
  const current = holder.__fluxframeDb;
  holder.__fluxframeDb = undefined;
  await current?.sequelize.close();
}
