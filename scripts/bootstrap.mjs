// Entry point for `npm start`, `npm test` and `npm run dev` on a machine that may have nothing but
// Node.js and npm: install the npm dependencies if they are missing or stale, then hand over to the
// TypeScript script of the same name (run by tsx, which the install brings).
import { spawn, spawnSync } from "node:child_process";
import { existsSync, statSync } from "node:fs";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";

const root = join(dirname(fileURLToPath(import.meta.url)), "..");
const command = process.argv[2];
if (!["start", "test", "dev", "load"].includes(command)) {
  console.error("usage: node scripts/bootstrap.mjs start|test|dev|load");
  process.exit(2);
}

function dependenciesStale() {
  const marker = join(root, "node_modules", ".package-lock.json");
  if (!existsSync(marker)) return true;
  const lock = join(root, "package-lock.json");
  return existsSync(lock) && statSync(lock).mtimeMs > statSync(marker).mtimeMs + 1000;
}

if (dependenciesStale()) {
  console.log("» Installing npm dependencies (npm ci)…");
  const ci = existsSync(join(root, "package-lock.json")) ? ["ci"] : ["install"];
  const result = spawnSync("npm", [...ci, "--no-audit", "--no-fund"], { cwd: root, stdio: "inherit" });
  if (result.status !== 0) {
    console.error("npm could not install the dependencies; see the messages above.");
    process.exit(result.status ?? 1);
  }
}

const tsx = join(root, "node_modules", ".bin", "tsx");
const child = spawn(tsx, ["--conditions=react-server", join(root, "scripts", `${command}.ts`), ...process.argv.slice(3)], {
  cwd: root,
  stdio: "inherit",
});
for (const signal of ["SIGINT", "SIGTERM"]) process.on(signal, () => child.kill(signal));
child.on("exit", (code, signal) => process.exit(code ?? (signal ? 1 : 0)));
