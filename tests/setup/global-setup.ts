// Runs once before the HTTP and browser tests: a fresh test database with migrations and the demo
// seed, the fake SMTP server, a production build, `next start` on the test port and an ingest worker.
import { rmSync } from "node:fs";
import { startAppServer, startIngestWorker } from "../../scripts/lib/app-server";
import { buildIfNeeded } from "../../scripts/lib/build";
import { setUpDatabase } from "../../scripts/lib/database";
import { startFakeSmtp } from "../../scripts/lib/fake-smtp";
import { testEnv } from "./test-env";

export default async function setup() {
  Object.assign(process.env, testEnv);
  // Demo people yes, demo stacks no: tests upload their own files, and 300 MB of demo data would only slow them.
  await setUpDatabase({ fresh: true, seed: true, demoDatasets: false });
  rmSync(testEnv.OUTBOX_DIR, { recursive: true, force: true });
  rmSync(testEnv.STORAGE_DIR, { recursive: true, force: true });
  const smtp = await startFakeSmtp(Number(testEnv.SMTP_PORT), testEnv.OUTBOX_DIR);
  buildIfNeeded();
  const app = await startAppServer({ port: Number(testEnv.APP_PORT), mode: "start", env: testEnv, quiet: true });
  const worker = startIngestWorker(testEnv);
  return async () => {
    await worker.stop();
    await app.stop();
    await smtp.close();
  };
}
