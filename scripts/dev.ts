// npm run dev: the same database and mail set-up as npm start, then `next dev` with hot reload.
import { resolve } from "node:path";
import { startAppServer, startIngestWorker } from "./lib/app-server";
import { setUpDatabase } from "./lib/database";
import { loadDotEnv, root } from "./lib/env";
import { startFakeSmtp } from "./lib/fake-smtp";

async function main() {
  loadDotEnv();
  await setUpDatabase();
  const smtp =
    process.env.SMTP_FAKE === "1"
      ? await startFakeSmtp(Number(process.env.SMTP_PORT || 2525), resolve(root, process.env.OUTBOX_DIR || ".data/outbox"))
      : null;
  const app = await startAppServer({ port: Number(process.env.APP_PORT || 3000), mode: "dev" });
  const worker = startIngestWorker();
  console.log(`Fluxframe (development) at ${app.url}; outbox at ${app.url}/dev/outbox`);
  const shutdown = async () => {
    await worker.stop();
    await app.stop();
    await smtp?.close();
    process.exit(0);
  };
  process.on("SIGINT", shutdown);
  process.on("SIGTERM", shutdown);
}

main().catch((error) => {
  console.error(error instanceof Error ? error.message : error);
  process.exit(1);
});
