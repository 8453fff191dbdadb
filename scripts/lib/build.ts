// Runs `next build` only when the sources changed since the last build: the stamp is a hash of the
// path, size and modification time of every file the build reads.
import { spawnSync } from "node:child_process";
import { createHash } from "node:crypto";
import { existsSync, readdirSync, readFileSync, statSync, writeFileSync } from "node:fs";
import { join, relative } from "node:path";
import { root } from "./env";

const inputs = ["app", "components", "lib", "models", "workers", "public"];
const files = ["package-lock.json", "next.config.ts", "tailwind.config.ts", "postcss.config.mjs", "tsconfig.json", "tsconfig.app.json", "proxy.ts"];

function sourceStamp(): string {
  const hash = createHash("sha256");
  const visit = (path: string) => {
    if (!existsSync(path)) return;
    const stat = statSync(path);
    if (stat.isDirectory()) {
      for (const name of readdirSync(path).sort()) visit(join(path, name));
    } else {
      hash.update(`${relative(root, path)}:${stat.size}:${stat.mtimeMs}\n`);
    }
  };
  for (const dir of inputs) visit(join(root, dir));
  for (const file of files) visit(join(root, file));
  return hash.digest("hex");
}

export function buildIfNeeded(): void {
  const distDir = join(root, process.env.NEXT_DIST_DIR || ".next");
  const stampFile = join(distDir, "fluxframe-source-stamp");
  const stamp = sourceStamp();
  if (existsSync(join(distDir, "BUILD_ID")) && existsSync(stampFile) && readFileSync(stampFile, "utf8") === stamp) {
    console.log("» Build is up to date");
    return;
  }
  console.log("» Building the app (next build)…");
  const result = spawnSync(join(root, "node_modules", ".bin", "next"), ["build"], {
    cwd: root,
    stdio: "inherit",
    env: { ...process.env, NODE_ENV: "production", NEXT_TELEMETRY_DISABLED: "1" },
  });
  if (result.status !== 0) throw new Error("next build failed; see the messages above");
  writeFileSync(stampFile, stamp);
}
