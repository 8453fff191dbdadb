// Starts `next start` (or `next dev`) in its own process group and waits until it answers, so that it
// can be stopped as a group later (its process title changes to next-server; PLATFORM.md).
import { spawn, type ChildProcess } from "node:child_process";
import { closeSync, openSync } from "node:fs";
import { join } from "node:path";
import { root } from "./env";

/** SIGTERM to the child's whole process group, SIGKILL after 5 s if it is still there. */
async function stopProcessGroup(child: ChildProcess): Promise<void> {
  if (child.exitCode !== null || child.pid === undefined) return;
  const pid = child.pid;
  const exited = new Promise<void>((resolve) => child.once("exit", () => resolve()));
  try {
    process.kill(-pid, "SIGTERM");
  } catch {
    return;
  }
  const timer = setTimeout(() => {
    try {
      process.kill(-pid, "SIGKILL");
    } catch {
      /* already gone */
    }
  }, 5000);
  await exited;
  clearTimeout(timer);
}

export interface AppServer {
  url: string;
  child: ChildProcess;
  stop(): Promise<void>;
}

export async function startAppServer(options: {
  port: number;
  mode: "start" | "dev";
  env?: Record<string, string>;
  quiet?: boolean;
  /** Appends the server's stdout and stderr to this file (tests read it, e.g. to look for secrets). */
  logFile?: string;
}): Promise<AppServer> {
  const url = `http://localhost:${options.port}`;
  const log = options.logFile ? openSync(options.logFile, "a") : null;
  // Idle keep-alive connections stay open for 65 s instead of Node's 5 s: a client whose event loop
  // was busy for a few seconds (a load balancer, or a test that just generated a large file) would
  // otherwise send its next request on a socket the server is closing, and get "other side closed".
  // 65 s outlasts the common 60 s idle timeout of load balancers (common practice).
  const keepAlive = options.mode === "start" ? ["--keepAliveTimeout", "65000"] : [];
  const child = spawn(join(root, "node_modules", ".bin", "next"), [options.mode, "-p", String(options.port), ...keepAlive], {
    cwd: root,
    detached: true,
    stdio: log !== null ? ["ignore", log, log] : options.quiet ? ["ignore", "ignore", "inherit"] : "inherit",
    env: {
      ...process.env,
      ...options.env,
      // vitest sets NODE_ENV=test; next-auth then skips .env handling and fails with NO_SECRET.
      NODE_ENV: options.mode === "dev" ? "development" : "production",
      NEXT_TELEMETRY_DISABLED: "1",
    },
  });
  // The child holds its own copy of the descriptor.
  if (log !== null) closeSync(log);
  const stop = () => stopProcessGroup(child);

  const deadline = Date.now() + 120_000;
  while (Date.now() < deadline) {
    if (child.exitCode !== null) throw new Error(`next ${options.mode} exited with code ${child.exitCode}`);
    try {
      const response = await fetch(`${url}/api/health`);
      if (response.ok) return { url, child, stop };
    } catch {
      /* not listening yet */
    }
    await new Promise((r) => setTimeout(r, 250));
  }
  await stop();
  throw new Error(`The app did not answer on ${url} within 120 s`);
}

/** Starts an ingest worker process (scripts/ingest-worker.ts) in its own process group. */
export function startIngestWorker(env: Record<string, string> = {}, options: { logFile?: string } = {}): { child: ChildProcess; stop(): Promise<void> } {
  const log = options.logFile ? openSync(options.logFile, "a") : null;
  const child = spawn(join(root, "node_modules", ".bin", "tsx"), ["--conditions=react-server", join(root, "scripts", "ingest-worker.ts")], {
    cwd: root,
    detached: true,
    stdio: log !== null ? ["ignore", log, log] : ["ignore", "ignore", "inherit"],
    env: { ...process.env, ...env },
  });
  if (log !== null) closeSync(log);
  return { child, stop: () => stopProcessGroup(child) };
}
