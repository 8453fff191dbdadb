// Debian's Chromium driven by playwright-core (no browser download). Each call gets a fresh profile,
// so two calls behave like two different people on two machines.
import { mkdtempSync, mkdirSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join, resolve } from "node:path";
import { chromium, type BrowserContext, type Page } from "playwright-core";
import { baseUrl } from "../setup/test-env";

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
    // Like tests/helpers/http.ts Client: each browser is its own machine for the server's per-address
    // rate limits, so the suite's many sign-ins do not share one limit.
    extraHTTPHeaders: { "x-forwarded-for": `10.${Math.floor(Math.random() * 256)}.${Math.floor(Math.random() * 256)}.${1 + Math.floor(Math.random() * 254)}` },
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
  // Anything the Content-Security-Policy refuses is a broken feature: collected here and reported
  // when the browser closes, so every browser test also checks the policy lets the app work.
  const refused: string[] = [];
  context.on("console", (message) => {
    if (message.type() === "error" && /Content Security Policy/i.test(message.text())) refused.push(message.text());
  });
  return {
    context,
    page,
    close: async () => {
      await context.close();
      rmSync(profile, { recursive: true, force: true });
      if (refused.length) throw new Error(`The Content-Security-Policy refused ${refused.length} thing(s):\n${refused.join("\n")}`);
    },
  };
}

export async function screenshot(page: Page, name: string): Promise<void> {
  mkdirSync(screenshotDir, { recursive: true });
  await page.screenshot({ path: join(screenshotDir, `${name}.png`), fullPage: true });
}

/** Signs in through the real form (once it is hydrated) and waits for the labs page. */
export async function signIn(page: Page, email: string, password: string): Promise<void> {
  await page.goto(`${baseUrl}/signin`);
  await page.locator("form[data-ready]").waitFor();
  await page.getByLabel("E-mail").fill(email);
  await page.getByLabel("Password").fill(password);
  await page.getByRole("button", { name: "Sign in" }).click();
  await page.waitForURL(`${baseUrl}/labs`);
}
