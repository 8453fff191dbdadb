// npm run db:start | db:stop | db:migrate | db:seed
import { dbSettings, loadDotEnv } from "./lib/env";
import { prepareDatabase, startMariaDb, stopMariaDb } from "./lib/mariadb";

loadDotEnv();
const command = process.argv[2];
const settings = dbSettings();

async function main() {
  switch (command) {
    case "start": {
      const instance = await startMariaDb(settings.port);
      await prepareDatabase(instance, settings);
      console.log(`MariaDB is running on 127.0.0.1:${settings.port}`);
      break;
    }
    case "stop": {
      const stopped = await stopMariaDb(settings.port);
      console.log(stopped ? `MariaDB on port ${settings.port} stopped.` : `MariaDB on port ${settings.port} was not running.`);
      break;
    }
    case "migrate":
    case "seed": {
      const instance = await startMariaDb(settings.port);
      await prepareDatabase(instance, settings);
      const { db, closeDb } = await import("../lib/server/db");
      // Seeding needs the current schema, so both commands migrate first.
      const { migrateUp } = await import("../lib/server/migrate");
      const applied = await migrateUp(db().sequelize);
      console.log(applied.length ? `Applied: ${applied.join(", ")}` : "Schema is up to date.");
      if (command === "seed") {
        const { seedDemo } = await import("../lib/server/seed");
        await seedDemo();
        console.log("Demo lab seeded.");
      }
      await closeDb();
      break;
    }
    default:
      console.error("usage: tsx scripts/db.ts start|stop|migrate|seed");
      process.exit(2);
  }
}

main().catch((error) => {
  console.error(error instanceof Error ? error.message : error);
  process.exit(1);
});
