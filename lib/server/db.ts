import "server-only";
import mariadb from "mariadb";
import { Sequelize } from "sequelize";
import { initModels, type Models } from "@/models";

// One Sequelize instance per process; kept on globalThis so that dev-mode reloads reuse the pool.
type Db = Models & { sequelize: Sequelize };
const holder = globalThis as typeof globalThis & { __fluxframeDb?: Db };

export function createSequelize(database = process.env.DB_NAME): Sequelize {
  return new Sequelize({
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
  });
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
