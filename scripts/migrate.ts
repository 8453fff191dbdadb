// Applies pending migrations to the database the settings name, and nothing else: unlike
// `npm run db:migrate` it neither starts nor prepares a private local MariaDB instance, so it works
// against a database server elsewhere (a deployment; README "Deployment"). Run it from one machine
// per release, before the new app servers and workers start.
import { loadDotEnv } from "./lib/env";

if (!process.env.DB_NAME) loadDotEnv();

const { db, closeDb } = await import("../lib/server/db");
const { migrateUp } = await import("../lib/server/migrate");
try {
  const applied = await migrateUp(db().sequelize);
  console.log(applied.length ? `Applied: ${applied.join(", ")}` : "Schema is up to date.");
} catch (error) {
  console.error("Migration failed:", error instanceof Error ? error.message : error);
  process.exitCode = 1;
} finally {
  await closeDb();
}
