// An ingest worker process: claims ingest jobs from MariaDB and runs them, outside any request.
// Started by npm start / npm run dev / the test set-up; more can run on other machines.
import { loadDotEnv } from "./lib/env";

if (!process.env.DB_NAME) loadDotEnv();

const controller = new AbortController();
for (const signal of ["SIGINT", "SIGTERM"] as const) process.on(signal, () => controller.abort());

const { workLoop } = await import("../lib/server/jobs");
const { purgeBin } = await import("../lib/server/datasets");
const { closeDb } = await import("../lib/server/db");
console.log(`[fluxframe] ingest worker ${process.pid} ready`);
// The bin clean-up rides along: datasets deleted more than BIN_DAYS ago are removed once an hour.
const purge = () => purgeBin().catch((error) => console.error("[fluxframe] bin clean-up failed:", error));
void purge();
const timer = setInterval(purge, 3600_000);
await workLoop(controller.signal);
clearInterval(timer);
await closeDb();
process.exit(0);
