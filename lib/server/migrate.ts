import "server-only";
import { readdirSync } from "node:fs";
import { join } from "node:path";
import { fileURLToPath, pathToFileURL } from "node:url";
import type { QueryInterface, Sequelize } from "sequelize";
import { SequelizeStorage, Umzug } from "umzug";

export interface MigrationContext {
  queryInterface: QueryInterface;
  sequelize: Sequelize;
}

const migrationsDir = join(fileURLToPath(new URL(".", import.meta.url)), "..", "..", "migrations");

// Migrations are TypeScript modules loaded with import() (umzug's default require() cannot load
// .ts under both tsx and vitest; PLATFORM.md). Names sort by their numeric prefix.
export function migrator(sequelize: Sequelize) {
  const files = readdirSync(migrationsDir).filter((f) => /^\d{4}-.+\.ts$/.test(f)).sort();
  return new Umzug<MigrationContext>({
    migrations: files.map((file) => {
      const url = pathToFileURL(join(migrationsDir, file)).href;
      return {
        name: file.replace(/\.ts$/, ""),
        up: async ({ context }) => (await import(url)).up(context),
        down: async ({ context }) => (await import(url)).down(context),
      };
    }),
    context: { queryInterface: sequelize.getQueryInterface(), sequelize },
    storage: new SequelizeStorage({ sequelize, tableName: "schema_migrations" }),
    logger: undefined,
  });
}

export async function migrateUp(sequelize: Sequelize): Promise<string[]> {
  const done = await migrator(sequelize).up();
  return done.map((m) => m.name);
}
