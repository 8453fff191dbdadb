// Debian's Chromium driven by playwright-core (no browser download). Each call gets a fresh profile,
// so two calls behave like two different people on two machines.
import { mkdtempSync, mkdirSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join, resolve } from "node:path";
import { chromium, type BrowserContext, type Page } from "playwright-core";

export const screenshotDir = resolve(import.meta.dirname, "..", "..", ".data", "screenshots");

export interface Person {
  context: BrowserContext;
  page: Page;
  close(): Promise<void>;
}

export async function openBrowser(): Promise<Person> {
  const profile = mkdtempSync(join(tmpdir(), "fluxframe-chromium-"));
  const context = await chromium.launchPersistentContext(profile, {
    executablePath: process.env.CHROMIUM_PATH || "/usr/bin/chromium",
    headless: true,
    viewport: { width: 1280, height: 860 },
    args: [
      "--no-sandbox",
      "--disable-gpu",
      "--disable-quic",
      "--no-first-run",
      "--disable-background-networking",
      "--disable-component-update",
      "--disable-sync",
    ],
  });
  const page = context.pages()[0] ?? (await context.newPage());
  return {
    context,
    page,
    close: async () => {
      await context.close();
      rmSync(profile, { recursive: true, force: true });
    },
  };
}

export async function screenshot(page: Page, name: string): Promise<void> {
  mkdirSync(screenshotDir, { recursive: true });
  await page.screenshot({ path: join(screenshotDir, `${name}.png`), fullPage: true });
}
