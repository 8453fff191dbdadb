// Debian packages the project needs (MariaDB server, Chromium, libtiff tools), installed with
// apt-get when missing. Needs root or password-less sudo; otherwise says exactly what to run.
import { spawnSync } from "node:child_process";
import { existsSync } from "node:fs";

export function findExecutable(name: string, extraDirs: string[] = []): string | null {
  const dirs = [...(process.env.PATH ?? "").split(":"), "/usr/sbin", "/usr/bin", "/sbin", ...extraDirs];
  for (const dir of dirs) {
    if (dir && existsSync(`${dir}/${name}`)) return `${dir}/${name}`;
  }
  return null;
}

let aptUpdated = false;

export function ensureDebianPackages(packages: string[], why: string): void {
  const isRoot = process.getuid?.() === 0;
  const sudo = !isRoot && spawnSync("sudo", ["-n", "true"]).status === 0 ? ["sudo", "-n"] : isRoot ? [] : null;
  if (!sudo) {
    throw new Error(
      `${why} needs the Debian packages ${packages.join(", ")}, and this user may not install them.\n` +
        `Ask an administrator to run: sudo apt-get install -y --no-install-recommends ${packages.join(" ")}`,
    );
  }
  const run = (args: string[]) => {
    const [cmd, ...rest] = [...sudo, ...args];
    const result = spawnSync(cmd, rest, {
      stdio: ["ignore", "inherit", "inherit"],
      env: { ...process.env, DEBIAN_FRONTEND: "noninteractive" },
    });
    if (result.status !== 0) throw new Error(`'${args.join(" ")}' failed (exit ${result.status})`);
  };
  console.log(`» Installing ${packages.join(", ")} from Debian (${why})…`);
  // Fresh machines may have empty or stale package lists (PLATFORM.md).
  if (!aptUpdated) {
    run(["apt-get", "update", "-qq"]);
    aptUpdated = true;
  }
  run(["apt-get", "install", "-y", "-qq", "--no-install-recommends", ...packages]);
}

/** Waits until process `pid` has exited; false when it is still running after `timeoutMs`. */
export async function waitForExit(pid: number, timeoutMs: number): Promise<boolean> {
  const deadline = Date.now() + timeoutMs;
  while (Date.now() < deadline) {
    try {
      process.kill(pid, 0);
    } catch {
      return true;
    }
    await new Promise((r) => setTimeout(r, 50));
  }
  return false;
}
