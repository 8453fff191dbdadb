// npm run backup [-- <folder>]: a consistent dump of the database plus every stored object, with a
// manifest of SHA-256 checksums and row counts (scripts/lib/backup.ts). Default folder:
// backups/<date-time> in the project (ignored by git).
import { join } from "node:path";
import { backup } from "./lib/backup";
import { dbSettings, loadDotEnv, root } from "./lib/env";
import { startMariaDb } from "./lib/mariadb";

loadDotEnv();
const outDir = process.argv[2] ?? join(root, "backups", new Date().toISOString().replace(/[:.]/g, "-"));
const settings = dbSettings();
await startMariaDb(settings.port);
await backup({ outDir, db: settings, storage: process.env, log: (line) => console.log(line) });
process.exit(0);
