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

const LOCK_RETRIES = 3;

/**
 * A deadlock rolls the whole transaction back, and InnoDB's advice is to run it again. Managed
 * transactions (the callback form, which every caller here uses) are therefore retried a few times
 * with a short random pause; the callback runs again from the start on a fresh transaction.
 */
export function retryTransactionsOnLockConflict(sequelize: Sequelize): Sequelize {
  const original = sequelize.transaction.bind(sequelize) as (...args: unknown[]) => Promise<unknown>;
  const wrapped = async (...args: unknown[]) => {
    if (!args.some((a) => typeof a === "function")) return original(...args);
    for (let attempt = 0; ; attempt++) {
      try {
        return await original(...args);
      } catch (error) {
        if (attempt >= LOCK_RETRIES || !isLockConflict(error)) throw error;
        await new Promise((r) => setTimeout(r, 20 + Math.random() * 80 * (attempt + 1)));
      }
    }
  };
  (sequelize as unknown as { transaction: typeof wrapped }).transaction = wrapped;
  return sequelize;
}

export function createSequelize(database = process.env.DB_NAME): Sequelize {
  return retryTransactionsOnLockConflict(new Sequelize({
    dialect: "mariadb",
    dialectModule: mariadb,
    host: process.env.DB_HOST || "127.0.0.1",
    port: Number(process.env.DB_PORT || 3307),
    database,
    username: process.env.DB_USER,
    password: process.env.DB_PASSWORD,
    logging: false,
    timezone: "+00:00",
    pool: { max: 10, min: 0, idle: 10_000, acquire: 20_000 },
    // Transient connection faults (a database restart) are retried before a caller sees them.
    retry: { max: 3, match: [/ECONNREFUSED/, /ECONNRESET/, /SequelizeConnectionError/, /PROTOCOL_CONNECTION_LOST/] },
    dialectOptions: { connectTimeout: 5000 },
  }));
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
