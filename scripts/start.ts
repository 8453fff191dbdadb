// npm start: dependencies (bootstrap.mjs), MariaDB, migrations, demo seed, build, serve.
import { startAppServer, startIngestWorker } from "./lib/app-server";
import { buildIfNeeded } from "./lib/build";
import { setUpDatabase } from "./lib/database";
import { loadDotEnv, root } from "./lib/env";
import { startFakeSmtp, type FakeSmtp } from "./lib/fake-smtp";
import { resolve } from "node:path";

async function main() {
  loadDotEnv();
  await setUpDatabase();
  let smtp: FakeSmtp | null = null;
  if (process.env.SMTP_FAKE === "1") {
    const outbox = resolve(root, process.env.OUTBOX_DIR || ".data/outbox");
    smtp = await startFakeSmtp(Number(process.env.SMTP_PORT || 2525), outbox);
    console.log(`» Fake SMTP server on 127.0.0.1:${smtp.port}; messages appear at /dev/outbox`);
  }
  buildIfNeeded();
  const port = Number(process.env.APP_PORT || 3000);
  const app = await startAppServer({ port, mode: "start", quiet: true });
  const worker = startIngestWorker();
  const { DEMO_LAB, DEMO_USERS } = await import("../lib/server/seed");
  console.log(`
Fluxframe is running at ${app.url}

Demo lab: ${DEMO_LAB}
${DEMO_USERS.map((u) => `  ${u.role.padEnd(7)} ${u.email.padEnd(36)} password: ${u.password}`).join("\n")}

Ctrl-C stops the app. The database keeps running; stop it with: npm run db:stop
`);
  let stopping = false;
  const shutdown = async () => {
    stopping = true;
    await worker.stop();
    await app.stop();
    await smtp?.close();
    process.exit(0);
  };
  process.on("SIGINT", shutdown);
  process.on("SIGTERM", shutdown);
  app.child.on("exit", (code) => {
    if (stopping) return;
    console.error(`The app stopped (exit ${code}).`);
    void smtp?.close().then(() => process.exit(code ?? 1));
  });
}

main().catch((error) => {
  console.error(error instanceof Error ? error.message : error);
  process.exit(1);
});
