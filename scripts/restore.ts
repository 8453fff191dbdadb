// npm run restore -- <backup folder>: restores into the database and blob store named in .env (or
// the environment), which must both be empty; checks every checksum before and every dataset's
// original and row count after (scripts/lib/backup.ts).
import { restore, RestoreError } from "./lib/backup";
import { dbSettings, loadDotEnv } from "./lib/env";
import { prepareDatabase, startMariaDb } from "./lib/mariadb";

loadDotEnv();
const fromDir = process.argv[2];
if (!fromDir) {
  console.error("usage: npm run restore -- <backup folder>   (into an empty database and an empty blob store)");
  process.exit(2);
}
const settings = dbSettings();
const instance = await startMariaDb(settings.port);
await prepareDatabase(instance, settings);
try {
  await restore({ fromDir, db: settings, storage: process.env, log: (line) => console.log(line) });
  process.exit(0);
} catch (error) {
  console.error(error instanceof RestoreError ? error.message : error);
  process.exit(1);
}
