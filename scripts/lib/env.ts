// Settings for the project's scripts: `.env` (created from `.env.example` on first run, with a fresh
// NEXTAUTH_SECRET) under whatever the caller's environment already sets.
import { randomBytes } from "node:crypto";
import { copyFileSync, existsSync, readFileSync, writeFileSync } from "node:fs";
import { join, resolve } from "node:path";

export const root = resolve(import.meta.dirname, "..", "..");

export function loadDotEnv(): void {
  const file = join(root, ".env");
  if (!existsSync(file)) {
    copyFileSync(join(root, ".env.example"), file);
    console.log("» Created .env from .env.example");
  }
  let text = readFileSync(file, "utf8");
  if (/^NEXTAUTH_SECRET=\s*$/m.test(text)) {
    text = text.replace(/^NEXTAUTH_SECRET=\s*$/m, `NEXTAUTH_SECRET=${randomBytes(32).toString("base64url")}`);
    writeFileSync(file, text);
    console.log("» Generated NEXTAUTH_SECRET in .env");
  }
  // Values already in the environment win over the file (Node's loader never overrides them).
  process.loadEnvFile(file);
}

export function required(name: string): string {
  const value = process.env[name];
  if (value === undefined || value === "") throw new Error(`Setting ${name} is missing (see .env.example)`);
  return value;
}

export interface DbSettings {
  host: string;
  port: number;
  name: string;
  user: string;
  password: string;
}

export function dbSettings(): DbSettings {
  return {
    host: process.env.DB_HOST || "127.0.0.1",
    port: Number(process.env.DB_PORT || 3307),
    name: required("DB_NAME"),
    user: required("DB_USER"),
    password: process.env.DB_PASSWORD ?? "",
  };
}
