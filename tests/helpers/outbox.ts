// Reads the fake SMTP server's outbox folder (written by scripts/lib/fake-smtp.ts) from the tests.
import { existsSync, readdirSync, readFileSync } from "node:fs";
import { join } from "node:path";
import { testEnv } from "../setup/test-env";

export interface StoredMail {
  to: string[];
  subject: string;
  text: string;
  date: string;
}

export function mailTo(address: string): StoredMail[] {
  const dir = testEnv.OUTBOX_DIR;
  if (!existsSync(dir)) return [];
  return readdirSync(dir)
    .sort()
    .map((f) => JSON.parse(readFileSync(join(dir, f), "utf8")) as StoredMail)
    .filter((m) => m.to.includes(address.toLowerCase()));
}

/** Waits for the newest message to an address that contains a link with `marker`, and returns the link. */
export async function linkInMail(address: string, marker: string, timeoutMs = 5000): Promise<string> {
  const deadline = Date.now() + timeoutMs;
  while (Date.now() < deadline) {
    const mails = mailTo(address);
    for (const mail of mails.reverse()) {
      const link = mail.text.match(new RegExp(`https?://\\S*${marker}\\S*`))?.[0];
      if (link) return link;
    }
    await new Promise((r) => setTimeout(r, 50));
  }
  throw new Error(`no mail to ${address} with a ${marker} link`);
}

export const invitationLink = (address: string) => linkInMail(address, "/invite/");
export const resetLink = (address: string) => linkInMail(address, "/reset-password");

/** Every `marker` link sent to an address so far; pass it to newLinkInMail before triggering another mail. */
export function linksInMail(address: string, marker: string): string[] {
  return mailTo(address)
    .map((mail) => mail.text.match(new RegExp(`https?://\\S*${marker}\\S*`))?.[0])
    .filter((link): link is string => Boolean(link));
}

/**
 * Waits for a `marker` link to an address that is not in `seen`, for flows that send a second mail to
 * the same address (a replaced invitation, a second reset) where the newest-mail lookup could race.
 */
export async function newLinkInMail(address: string, marker: string, seen: string[], timeoutMs = 5000): Promise<string> {
  const deadline = Date.now() + timeoutMs;
  while (Date.now() < deadline) {
    const link = linksInMail(address, marker).find((l) => !seen.includes(l));
    if (link) return link;
    await new Promise((r) => setTimeout(r, 50));
  }
  throw new Error(`no new mail to ${address} with a ${marker} link`);
}
