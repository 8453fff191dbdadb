// Sharing a view in Chromium with two people and one anonymous guest: the editor sets a view and
// shares it; a lab member and a guest open the link and see the same plane and black/white numbers;
// the guest's local changes are not saved; the member keeps it as their own view; after revoking,
// the link shows the revoked page (status 410).
import { readFileSync } from "node:fs";
import type { Page } from "playwright-core";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { loadStackFixture, type StackFixture } from "../imaging/stack-fixture";
import { openBrowser, type Person, screenshot, signIn } from "../helpers/browser";
import { labWithMembers, type LabWithMembers } from "../helpers/http";
import { uploadFile, waitForIngest } from "../helpers/uploads";
import { baseUrl } from "../setup/test-env";

let lab: LabWithMembers;
let fixture: StackFixture;
let datasetId: number;
let editor: Person;
let member: Person;
let guest: Person;
let linkUrl: string;

const blackOf = (page: Page, channel: string) => page.getByRole("region", { name: `Channel ${channel}` }).getByRole("spinbutton", { name: "Black point" });
const whiteOf = (page: Page, channel: string) => page.getByRole("region", { name: `Channel ${channel}` }).getByRole("spinbutton", { name: "White point" });

async function waitForDrawn(page: Page) {
  await page.getByText(/first plane drawn in \d+ ms/).waitFor({ timeout: 30_000 });
}

beforeAll(async () => {
  lab = await labWithMembers();
  fixture = loadStackFixture();
  const reply = await uploadFile(lab.editor, lab.labId, new Uint8Array(readFileSync(fixture.omePath)), { title: "Shared stack" });
  datasetId = reply.body.datasetId;
  expect((await waitForIngest(lab.editor, datasetId)).dataset.status).toBe("ready");
  [editor, member, guest] = await Promise.all([openBrowser(), openBrowser(), openBrowser()]);
  await signIn(editor.page, lab.editor.email, lab.editor.password);
  await signIn(member.page, lab.viewer.email, lab.viewer.password);
});

afterAll(async () => {
  await Promise.all([editor?.close(), member?.close(), guest?.close()]);
  fixture?.remove();
});

describe("sharing a view", () => {
  it("the editor sets a plane and black/white points and makes a link anyone may open", async () => {
    const page = editor.page;
    await page.goto(`${baseUrl}/labs/${lab.labId}/datasets/${datasetId}`);
    await waitForDrawn(page);
    await page.getByRole("slider", { name: "z-slice" }).fill("2");
    await page.getByRole("slider", { name: "time point" }).fill("1");
    await blackOf(page, "nuclei").fill("150");
    await whiteOf(page, "nuclei").fill("2500");
    await blackOf(page, "membrane").fill("40");
    await whiteOf(page, "membrane").fill("3000");
    await page.getByRole("button", { name: "Share…" }).click();
    const dialog = page.getByRole("dialog", { name: "Share this view" });
    await expect(dialog.textContent()).resolves.toContain("plane z 3, t 2");
    await dialog.getByLabel("Who may open it").selectOption("anyone");
    await screenshot(page, "links-01-share-dialog");
    await dialog.getByRole("button", { name: "Create link" }).click();
    const address = dialog.getByLabel("Link address");
    await address.waitFor();
    linkUrl = await address.inputValue();
    expect(linkUrl).toMatch(/\/v\/[A-Za-z0-9_-]{43}$/);
    await screenshot(page, "links-02-link-made");
    await dialog.getByRole("button", { name: "Done" }).click();
  });

  it("the editor names the view for the lab; the dataset page opens it in one click", async () => {
    const page = editor.page;
    page.once("dialog", (d) => void d.accept("Membrane at z 3"));
    await page.getByLabel("Saved views").selectOption("save");
    await page.getByText('Saved view "Membrane at z 3".').waitFor();
    // Move away from it, so that opening the saved view visibly brings it back.
    await blackOf(page, "nuclei").fill("300");
    await page.getByRole("slider", { name: "z-slice" }).fill("0");
    await page.goto(`${baseUrl}/labs/${lab.labId}/datasets/${datasetId}/details`);
    await page.getByRole("link", { name: "Membrane at z 3" }).click();
    await waitForDrawn(page);
    await page.getByText('Opened the saved view "Membrane at z 3".').waitFor();
    expect(await blackOf(page, "nuclei").inputValue()).toBe("150");
    await expect(page.getByRole("slider", { name: "z-slice" }).inputValue()).resolves.toBe("2");
  });

  for (const who of ["member", "guest"] as const) {
    it(`a ${who === "member" ? "lab member" : "guest without an account"} opening the link sees the same plane and numbers`, async () => {
      const page = (who === "member" ? member : guest).page;
      await page.goto(linkUrl);
      await waitForDrawn(page);
      await expect(page.getByText(/A shared view, read only/).count()).resolves.toBe(1);
      await expect(page.getByRole("slider", { name: "z-slice" }).inputValue()).resolves.toBe("2");
      await expect(page.getByRole("slider", { name: "time point" }).inputValue()).resolves.toBe("1");
      expect(await blackOf(page, "nuclei").inputValue()).toBe("150");
      expect(await whiteOf(page, "nuclei").inputValue()).toBe("2500");
      expect(await blackOf(page, "membrane").inputValue()).toBe("40");
      expect(await whiteOf(page, "membrane").inputValue()).toBe("3000");
      // The readout shows the stored raw value at a known pixel of that plane (z 2, t 1; XYZCT order).
      await page.locator("[aria-label^='Bench:']").focus();
      await page.keyboard.press("1");
      await page.waitForTimeout(200);
      const box = (await page.getByLabel("Image plane").boundingBox())!;
      const scale = box.width / fixture.width;
      await page.mouse.move(box.x + 7.5 * scale, box.y + 3.5 * scale);
      await page.getByLabel("Readout").getByText("x 7 y 3").waitFor();
      const expected = fixture.planes[2 + 3 * (0 + 2 * 1)][3 * fixture.width + 7];
      await expect(page.getByLabel("Readout").textContent()).resolves.toContain(`nuclei ${expected} DN`);
      // Only a signed-in member may keep the view; nobody gets the lab's preset menu through a link.
      await expect(page.getByRole("button", { name: "Save as my view" }).count()).resolves.toBe(who === "member" ? 1 : 0);
      await expect(page.getByLabel("Preset").count()).resolves.toBe(0);
      await screenshot(page, `links-03-opened-by-${who}`);
    });
  }

  it("the guest's changes stay in their tab: after a reload the snapshot is back", async () => {
    const page = guest.page;
    await blackOf(page, "nuclei").fill("900");
    await page.getByRole("slider", { name: "z-slice" }).fill("0");
    await page.waitForTimeout(1500); // longer than the bench's save delay: nothing may be sent
    await page.goto(linkUrl);
    await waitForDrawn(page);
    expect(await blackOf(page, "nuclei").inputValue()).toBe("150");
    await expect(page.getByRole("slider", { name: "z-slice" }).inputValue()).resolves.toBe("2");
  });

  it("the member saves the shared view as their own and finds it on their bench", async () => {
    const page = member.page;
    await blackOf(page, "nuclei").fill("175");
    await page.getByRole("button", { name: "Save as my view" }).click();
    await page.getByText("Saved.").waitFor();
    const saved = await lab.viewer.get(`/api/datasets/${datasetId}/view`);
    expect(saved.body.view).toMatchObject({ z: 2, t: 1 });
    expect(saved.body.view.channels[0]).toMatchObject({ black: 175, white: 2500 });
    await page.getByRole("link", { name: "Open on your bench" }).click();
    await waitForDrawn(page);
    expect(await blackOf(page, "nuclei").inputValue()).toBe("175");
  });

  it("the dataset page lists the link with its opens; after revoking, the link shows the revoked page", async () => {
    const page = editor.page;
    await page.goto(`${baseUrl}/labs/${lab.labId}/datasets/${datasetId}/details`);
    const table = page.getByRole("table", { name: "View links of this dataset" });
    await table.waitFor();
    const row = table.getByRole("row").nth(1);
    // The member's and the guest's two openings (the reload counts as another).
    await expect(row.textContent()).resolves.toContain("anyone with the link");
    expect(Number((await row.getByRole("cell").nth(4).textContent())?.trim())).toBeGreaterThanOrEqual(3);
    await screenshot(page, "links-04-dataset-page");
    page.once("dialog", (d) => void d.accept());
    await row.getByRole("button", { name: "Revoke" }).click();
    await row.getByText("revoked").waitFor();

    const response = await guest.page.goto(linkUrl);
    expect(response?.status()).toBe(410);
    await guest.page.getByRole("heading", { name: "This link no longer works" }).waitFor();
    await screenshot(guest.page, "links-05-revoked");
  });
});
