// A person's whole path through the foundation, in Chromium: sign up → create a lab → invite a second
// address → open the invitation from the fake outbox → the invitee signs up and joins → as a viewer
// they can neither invite nor change roles (in the page and at the API).
import { randomUUID } from "node:crypto";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { openBrowser, screenshot, type Person } from "../helpers/browser";
import { baseUrl } from "../setup/test-env";

const tag = randomUUID().slice(0, 6);
const owner = { name: "Rosa Lindqvist", email: `rosa-${tag}@example.test`, password: "rosa-e2e-password" };
const invitee = { name: "Tomas Ferreira", email: `tomas-${tag}@example.test`, password: "tomas-e2e-password" };
const labName = `Spindle Assembly Group ${tag}`;

let rosa: Person;
let tomas: Person;

beforeAll(async () => {
  rosa = await openBrowser();
  tomas = await openBrowser();
});

afterAll(async () => {
  await rosa?.close();
  await tomas?.close();
});

describe("invitation flow in the browser", () => {
  let labUrl = "";
  let invitationUrl = "";

  it("lets a new person sign up and create a lab", async () => {
    const page = rosa.page;
    await page.goto(`${baseUrl}/signup`);
    await page.locator("form[data-ready]").waitFor();
    await page.getByLabel("Your name").fill(owner.name);
    await page.getByLabel("E-mail").fill(owner.email);
    await page.getByLabel("Password").fill(owner.password);
    await page.getByRole("button", { name: "Create account" }).click();
    await page.waitForURL(`${baseUrl}/labs`);
    await expect(page.getByRole("heading", { name: "Your labs" }).isVisible()).resolves.toBe(true);
    await page.getByText("You are not in a lab yet").waitFor();
    await screenshot(page, "foundation-01-labs-empty");

    await page.getByLabel("New lab name").fill(labName);
    await page.getByRole("button", { name: "Create lab" }).click();
    await page.waitForURL(/\/labs\/\d+\/members$/);
    labUrl = page.url().replace(/\/members$/, "");
    await page.getByRole("cell", { name: owner.email, exact: true }).waitFor();
  });

  it("sends an invitation that arrives in the outbox", async () => {
    const page = rosa.page;
    await page.getByLabel("E-mail address").fill(invitee.email);
    await page.getByLabel("Role", { exact: true }).selectOption("viewer");
    await page.getByRole("button", { name: "Send invitation" }).click();
    await page.getByText(`Invitation sent to ${invitee.email}`).waitFor();
    await page.getByRole("cell", { name: invitee.email, exact: true }).first().waitFor();
    await screenshot(page, "foundation-02-members-owner");

    await page.goto(`${baseUrl}/dev/outbox`);
    const message = page.getByRole("article").filter({ hasText: `To ${invitee.email}` });
    await message.first().waitFor();
    invitationUrl = (await message.first().getByRole("link").first().getAttribute("href")) ?? "";
    expect(invitationUrl).toMatch(new RegExp(`^${baseUrl}/invite/[A-Za-z0-9_-]{40,}$`));
  });

  it("lets the invitee create an account for the invited address and join", async () => {
    const page = tomas.page;
    await page.goto(invitationUrl);
    await page.getByRole("heading", { name: `Join ${labName}` }).waitFor();
    await screenshot(page, "foundation-03-invitation");
    await page.getByRole("link", { name: "Create account" }).click();
    await page.locator("form[data-ready]").waitFor();
    await expect(page.getByLabel("E-mail").inputValue()).resolves.toBe(invitee.email);
    await page.getByLabel("Your name").fill(invitee.name);
    await page.getByLabel("Password").fill(invitee.password);
    await page.getByRole("button", { name: "Create account" }).click();
    await page.waitForURL(invitationUrl);
    await page.getByRole("button", { name: `Accept and join ${labName}` }).click();
    await page.waitForURL(`${labUrl}/datasets`);
    await page.getByRole("heading", { name: "Datasets", exact: true }).waitFor();
  });

  it("does not let a viewer invite or change roles", async () => {
    const page = tomas.page;
    await page.goto(`${labUrl}/members`);
    await page.getByRole("cell", { name: owner.email, exact: true }).waitFor();
    await page.getByText("Only owners can invite people or change roles.").waitFor();
    expect(await page.getByRole("form", { name: "Invite a member" }).count()).toBe(0);
    expect(await page.getByRole("combobox", { name: /Role of/ }).count()).toBe(0);
    await screenshot(page, "foundation-04-members-viewer");

    // The server refuses too, whatever the page shows: requests made with the viewer's own session.
    const labId = labUrl.split("/").pop();
    const statuses = await page.evaluate(async (id) => {
      const invite = await fetch(`/api/labs/${id}/invitations`, {
        method: "POST",
        headers: { "content-type": "application/json" },
        body: JSON.stringify({ email: "someone@example.test", role: "owner" }),
      });
      const me = await (await fetch("/api/me")).json();
      const promote = await fetch(`/api/labs/${id}/members/${me.user.id}`, {
        method: "PATCH",
        headers: { "content-type": "application/json" },
        body: JSON.stringify({ role: "owner" }),
      });
      return [invite.status, promote.status];
    }, labId);
    expect(statuses).toEqual([403, 403]);
  });

  it("shows the owner that the invitation was accepted", async () => {
    const page = rosa.page;
    await page.goto(`${labUrl}/members`);
    const row = page.getByRole("row").filter({ hasText: invitee.email });
    await row.getByRole("combobox").first().waitFor();
    await expect(row.first().getByRole("combobox").inputValue()).resolves.toBe("viewer");
    await page.getByRole("row").filter({ hasText: "accepted" }).first().waitFor();
  });
});
