// Database set-up shared by start, dev and test: a running private instance, the app's login and
// database, every migration applied, and the demo lab seeded.
import { dbSettings } from "./env";
import { prepareDatabase, startMariaDb } from "./mariadb";

export async function setUpDatabase(options: { fresh?: boolean; seed?: boolean; demoDatasets?: boolean } = {}): Promise<void> {
  const settings = dbSettings();
  const instance = await startMariaDb(settings.port);
  await prepareDatabase(instance, settings, { fresh: options.fresh });
  // Imported after the environment is loaded: the app's db module reads it when first used.
  const { db, closeDb } = await import("../../lib/server/db");
  const { migrateUp } = await import("../../lib/server/migrate");
  const applied = await migrateUp(db().sequelize);
  console.log(applied.length ? `» Applied migrations: ${applied.join(", ")}` : "» Database schema is up to date");
  if (options.seed !== false) {
    const { seedDemo } = await import("../../lib/server/seed");
    if (options.demoDatasets !== false) console.log("» Demo lab: writing invented demo stacks (first run only, ~30 s)…");
    await seedDemo({ datasets: options.demoDatasets });
    console.log("» Demo lab is in place");
  }
  await closeDb();
}
