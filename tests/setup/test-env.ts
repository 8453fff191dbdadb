// Settings for every test run: a separate MariaDB instance (port 3308) and database, a separate app
// port, fake SMTP port and outbox, so tests never touch the demo installation started by npm start.
// TEST_SLOT=n (default 0) shifts the database name, ports, outbox and build folder, so two people
// (or two agents) can run the server tests on one machine at the same time.
import { resolve } from "node:path";

const root = resolve(import.meta.dirname, "..", "..");
const slot = Number(process.env.TEST_SLOT || 0);
const suffix = slot ? `_${slot}` : "";

export const testEnv = {
  DB_HOST: "127.0.0.1",
  DB_PORT: "3308",
  DB_NAME: `fluxframe_test${suffix}`,
  DB_USER: "fluxframe",
  DB_PASSWORD: "fluxframe-test-only",
  APP_PORT: String(3100 + slot * 10),
  NEXTAUTH_URL: `http://localhost:${3100 + slot * 10}`,
  NEXTAUTH_SECRET: "fluxframe-test-secret-not-for-production-use",
  SMTP_HOST: "127.0.0.1",
  SMTP_PORT: String(2526 + slot * 10),
  SMTP_FAKE: "1",
  SMTP_USER: "",
  SMTP_PASSWORD: "",
  MAIL_FROM: "Fluxframe test <no-reply@fluxframe.test>",
  OUTBOX_DIR: resolve(root, ".data", `outbox-test${suffix}`),
  OUTBOX_OPEN: "1",
  STORAGE_DRIVER: "local",
  STORAGE_DIR: resolve(root, ".data", `blobs-test${suffix}`),
  // Cheap hashes keep the suite fast; production uses the .env value (10 by default).
  BCRYPT_ROUNDS: "4",
  ...(slot ? { NEXT_DIST_DIR: `.next-test${suffix}` } : {}),
};

export const baseUrl = testEnv.NEXTAUTH_URL;
