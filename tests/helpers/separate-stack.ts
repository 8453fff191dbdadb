// A stack of its own for fault tests: a separate MariaDB instance (its own port and data folder, so
// restarting or killing it never touches the shared test database on 3308), the app's schema
// migrated into it, a separate `next start` (the slot's build) and, when asked, an ingest worker.
// Everything is started in beforeAll and stopped in afterAll by the test file that uses it.
import { randomUUID } from "node:crypto";
import { mkdirSync, readFileSync, rmSync } from "node:fs";
import { join } from "node:path";
import { Sequelize } from "sequelize";
import mariadb from "mariadb";
import { startAppServer, startIngestWorker, type AppServer } from "../../scripts/lib/app-server";
import { instanceFor, prepareDatabase, startMariaDb, stopMariaDb } from "../../scripts/lib/mariadb";
import { migrateUp } from "@/lib/server/migrate";
import { Client } from "./http";
import { testEnv } from "../setup/test-env";
import { waitForExit } from "../../scripts/lib/system";

const root = join(import.meta.dirname, "..", "..");
export const slot = Number(process.env.TEST_SLOT || 0);

export interface StackOptions {
  /**
   * Which of the fault test files this is (0–3), so that files running at the same time never share
   * a port: MariaDB on 3330 + 10·index + slot, the app on 3400 + 10·slot + index (outside the
   * 3100 + 10·slot + 0…9 range the slots' main apps and second apps use).
   */
  index: number;
  /** A short name: database, storage and log folders carry it. */
  name: string;
  /** Extra environment for the app server (e.g. STORAGE_FAULT_AFTER_BYTES). */
  appEnv?: Record<string, string>;
  worker?: boolean;
}

export class SeparateStack {
  readonly dbPort: number;
  readonly appPort: number;
  readonly env: Record<string, string>;
  readonly logDir: string;
  app: AppServer | null = null;
  worker: ReturnType<typeof startIngestWorker> | null = null;

  constructor(readonly options: StackOptions) {
    this.dbPort = 3330 + 10 * options.index + slot;
    this.appPort = 3400 + 10 * slot + options.index;
    this.logDir = join(root, ".data", `fault-logs-${options.name}${slot ? `_${slot}` : ""}`);
    this.env = {
      ...testEnv,
      DB_PORT: String(this.dbPort),
      DB_NAME: `fluxframe_fault_${options.name}`,
      APP_PORT: String(this.appPort),
      NEXTAUTH_URL: `http://localhost:${this.appPort}`,
      STORAGE_DIR: join(root, ".data", `blobs-fault-${options.name}${slot ? `_${slot}` : ""}`),
    };
  }

  get url(): string {
    return `http://localhost:${this.appPort}`;
  }

  get appLog(): string {
    return join(this.logDir, "app.log");
  }

  get workerLog(): string {
    return join(this.logDir, "worker.log");
  }

  /** A fresh database with every migration applied, an empty storage folder and empty logs. */
  async prepare(): Promise<void> {
    rmSync(this.logDir, { recursive: true, force: true });
    mkdirSync(this.logDir, { recursive: true });
    rmSync(this.env.STORAGE_DIR, { recursive: true, force: true });
    const instance = await startMariaDb(this.dbPort);
    await prepareDatabase(instance, { host: "127.0.0.1", port: this.dbPort, name: this.env.DB_NAME, user: this.env.DB_USER, password: this.env.DB_PASSWORD }, { fresh: true });
    const sequelize = this.sequelize();
    try {
      await migrateUp(sequelize);
    } finally {
      await sequelize.close();
    }
  }

  /** A connection of the test's own to the separate database (for assertions). */
  sequelize(): Sequelize {
    return new Sequelize({
      dialect: "mariadb",
      dialectModule: mariadb,
      host: "127.0.0.1",
      port: this.dbPort,
      database: this.env.DB_NAME,
      username: this.env.DB_USER,
      password: this.env.DB_PASSWORD,
      logging: false,
      timezone: "+00:00",
      pool: { max: 2, min: 0, idle: 1000 },
    });
  }

  async startApp(extraEnv: Record<string, string> = {}): Promise<AppServer> {
    this.app = await startAppServer({ port: this.appPort, mode: "start", env: { ...this.env, ...this.options.appEnv, ...extraEnv }, logFile: this.appLog });
    return this.app;
  }

  async stopApp(): Promise<void> {
    await this.app?.stop();
    this.app = null;
  }

  startWorker(extraEnv: Record<string, string> = {}): void {
    this.worker = startIngestWorker({ ...this.env, ...extraEnv }, { logFile: this.workerLog });
  }

  async stopWorker(): Promise<void> {
    await this.worker?.stop();
    this.worker = null;
  }

  async start(): Promise<void> {
    await this.prepare();
    await this.startApp();
    if (this.options.worker) this.startWorker();
  }

  async stop(): Promise<void> {
    await this.stopWorker();
    await this.stopApp();
    await stopMariaDb(this.dbPort);
  }

  async stopDb(): Promise<void> {
    await stopMariaDb(this.dbPort);
  }

  async startDb(): Promise<void> {
    await startMariaDb(this.dbPort);
  }

  /** Clean shutdown (SHUTDOWN statement) and start again on the same data folder. */
  async restartDb(pauseMs = 0): Promise<void> {
    await stopMariaDb(this.dbPort);
    if (pauseMs) await new Promise((r) => setTimeout(r, pauseMs));
    await startMariaDb(this.dbPort);
  }

  /** SIGKILL to mariadbd (no shutdown at all: InnoDB recovers from its redo log on the next start). */
  async killDb(pauseMs = 0): Promise<void> {
    const instance = instanceFor(this.dbPort);
    const pid = Number(readFileSync(instance.pidFile, "utf8").trim());
    process.kill(pid, "SIGKILL");
    await waitForExit(pid, 15_000);
    // The socket file stays behind after a kill; startMariaDb's liveness probe then fails to connect and starts a new server.
    if (pauseMs) await new Promise((r) => setTimeout(r, pauseMs));
    await startMariaDb(this.dbPort);
  }

  /** Signs up a fresh person on this stack's app and signs them in. */
  async newUser(prefix = "user"): Promise<Client> {
    const client = new Client();
    client.base = this.url;
    const email = `${prefix}-${randomUUID().slice(0, 8)}@example.test`;
    const password = `pw-${randomUUID()}`;
    const reply = await client.post("/api/account/signup", { name: `Test ${prefix}`, email, password });
    if (reply.status !== 201) throw new Error(`sign-up failed: ${reply.status} ${JSON.stringify(reply.body)}`);
    if (!(await client.signIn(email, password))) throw new Error("sign-in after sign-up failed");
    return client;
  }
}
