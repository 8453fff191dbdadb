// Keyboard access and the forgotten-password path, in Chromium: a person signs in with the keyboard
// alone and sees where the focus is; a forgotten password is reset from the mailed link.
import { randomUUID } from "node:crypto";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { openBrowser, screenshot, type Person } from "../helpers/browser";
import { newUser, type Client } from "../helpers/http";
import { baseUrl } from "../setup/test-env";

let person: Person;
let account: Client;

beforeAll(async () => {
  account = await newUser("keyboard");
  person = await openBrowser();
});

afterAll(async () => {
  await person?.close();
});

describe("keyboard and password reset", () => {
  it("signs in with the keyboard alone, with a visible focus ring on each control", async () => {
    const page = person.page;
    await page.goto(`${baseUrl}/signin`);
    await page.locator("form[data-ready]").waitFor();
    const outlines: string[] = [];
    // Tab from the top of the page until the e-mail field has focus (skip link, logo link first).
    for (let i = 0; i < 10 && !(await page.getByLabel("E-mail").evaluate((el) => el === document.activeElement)); i++) {
      await page.keyboard.press("Tab");
    }
    await expect(page.getByLabel("E-mail").evaluate((el) => el === document.activeElement)).resolves.toBe(true);
    outlines.push(await page.evaluate(() => getComputedStyle(document.activeElement!).outlineStyle));
    await page.keyboard.type(account.email);
    await page.keyboard.press("Tab");
    outlines.push(await page.evaluate(() => getComputedStyle(document.activeElement!).outlineStyle));
    await page.keyboard.type(account.password);
    await page.keyboard.press("Tab");
    await expect(page.evaluate(() => document.activeElement?.textContent)).resolves.toContain("Sign in");
    outlines.push(await page.evaluate(() => getComputedStyle(document.activeElement!).outlineStyle));
    await screenshot(page, "foundation-05-keyboard-focus");
    // :focus-visible draws a solid outline on every control reached by Tab (LOOK.md: visible focus).
    expect(outlines).toEqual(["solid", "solid", "solid"]);
    await page.keyboard.press("Enter");
    await page.waitForURL(`${baseUrl}/labs`);
  });

  it("resets a forgotten password from the mailed link and signs in with the new one", async () => {
    const context = person.context;
    await context.clearCookies();
    const page = person.page;
    await page.goto(`${baseUrl}/signin`);
    await page.getByRole("link", { name: "Forgotten password?" }).click();
    // Wait for the new page: until it arrives, the sign-in form's own E-mail field is still on screen.
    await page.waitForURL(`${baseUrl}/forgot-password`);
    await page.getByRole("button", { name: "Send reset link" }).waitFor();
    await page.getByLabel("E-mail").fill(account.email);
    await page.getByRole("button", { name: "Send reset link" }).click();
    await page.getByText("If an account uses this address, a reset link is on its way.").waitFor();

    await page.goto(`${baseUrl}/dev/outbox`);
    const mail = page.getByRole("article").filter({ hasText: `To ${account.email}` }).filter({ hasText: "Reset your Fluxframe password" });
    await mail.first().waitFor();
    const link = (await mail.first().getByRole("link").first().getAttribute("href")) ?? "";
    expect(link).toMatch(new RegExp(`^${baseUrl}/reset-password\\?token=`));

    await page.goto(link);
    const newPassword = `kb-${randomUUID()}`;
    await page.getByLabel("New password").fill("short");
    await page.getByRole("button", { name: "Set new password" }).click();
    await page.getByText("Use at least 10 characters.").waitFor();
    await page.getByLabel("New password").fill(newPassword);
    await page.getByRole("button", { name: "Set new password" }).click();
    await page.getByText("Your password is changed.").waitFor();

    await page.getByRole("link", { name: "Sign in" }).click();
    await page.locator("form[data-ready]").waitFor();
    await page.getByLabel("E-mail").fill(account.email);
    await page.getByLabel("Password").fill(account.password);
    await page.getByRole("button", { name: "Sign in" }).click();
    await page.getByText("Wrong e-mail address or password.").waitFor();
    await page.getByLabel("Password").fill(newPassword);
    await page.getByRole("button", { name: "Sign in" }).click();
    await page.waitForURL(`${baseUrl}/labs`);
  });
});
