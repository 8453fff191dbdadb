import "server-only";
import { existsSync, readdirSync, readFileSync } from "node:fs";
import { isAbsolute, join } from "node:path";
import type { SessionUser } from "./access";

export interface OutboxMessage {
  id: string;
  date: string;
  from: string;
  to: string[];
  subject: string;
  text: string;
}

/** The fake SMTP outbox is readable in development, when OUTBOX_OPEN=1 (local demo), or by site admins. */
export function outboxOpenTo(user: SessionUser | null): boolean {
  if (process.env.SMTP_FAKE !== "1") return false; // real SMTP: there is no local outbox
  if (process.env.NODE_ENV === "development" || process.env.OUTBOX_OPEN === "1") return true;
  return Boolean(user?.isSiteAdmin);
}

export function readOutbox(limit = 100): OutboxMessage[] {
  const configured = process.env.OUTBOX_DIR || ".data/outbox";
  const dir = isAbsolute(configured) ? configured : join(/* turbopackIgnore: true */ process.cwd(), configured);
  if (!existsSync(dir)) return [];
  return readdirSync(dir)
    .filter((f) => f.endsWith(".json"))
    .sort()
    .reverse()
    .slice(0, limit)
    .map((f) => JSON.parse(readFileSync(join(dir, f), "utf8")) as OutboxMessage);
}
