// The Checks page and a dataset's report in Chromium: a stack with one saturated time point is listed
// as "re-image" (also in the library), the report names where the saturation is and plots it over t
// and z, and the owner's looser limits turn the verdict into "caution" at once.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { writeTiff } from "@/lib/tiff/writer";
import { openBrowser, type Person, screenshot, signIn } from "../helpers/browser";
import { labWithMembers, type LabWithMembers } from "../helpers/http";
import { uploadFile, waitForIngest } from "../helpers/uploads";
import { baseUrl } from "../setup/test-env";

let lab: LabWithMembers;
let person: Person;
let saturatedId: number;

beforeAll(async () => {
  lab = await labWithMembers();
  const W = 24;
  const H = 16;
  const ramp = (i: number) => 100 + ((i * 37) % 2900);
  const upload = async (title: string, planes: Uint16Array[]) => {
    const tiff = await writeTiff(planes, { width: W, height: H, bitsPerSample: 16 });
    const reply = await uploadFile(lab.editor, lab.labId, tiff, { fileName: `${title}.tif`, title, dimensions: { sizeC: 1, sizeZ: 2, sizeT: planes.length / 2, order: "XYCZT" } });
    expect((await waitForIngest(lab.editor, reply.body.datasetId)).dataset.status).toBe("ready");
    return reply.body.datasetId as number;
  };
  // 2 z × 5 t; the planes of t = 3 (0-based) hold 12 pixels at 4095 each.
  saturatedId = await upload("Saturated time course", Array.from({ length: 10 }, (_, k) => Uint16Array.from({ length: W * H }, (_, i) => (Math.floor(k / 2) === 3 && i < 12 ? 4095 : ramp(i)))));
  await upload("Well exposed", Array.from({ length: 2 }, () => Uint16Array.from({ length: W * H }, (_, i) => ramp(i) + 1000)));
  person = await openBrowser();
  const page = person.page;
  await signIn(page, lab.owner.email, lab.owner.password);
});

afterAll(async () => {
  await person?.close();
});

describe("checks", () => {
  it("lists each dataset with its verdict, sortable, also in the library", async () => {
    const page = person.page;
    await page.goto(`${baseUrl}/labs/${lab.labId}/checks`);
    const table = page.getByRole("table", { name: "Acquisition checks of the lab's datasets" });
    await table.waitFor();
    const row = table.getByRole("row", { name: /Saturated time course/ });
    await expect(row.textContent()).resolves.toContain("re-image");
    await expect(table.getByRole("row", { name: /Well exposed/ }).textContent()).resolves.toContain("ready");
    // Sorting by verdict puts "re-image" first when descending and last when ascending.
    const header = table.getByRole("columnheader", { name: /Verdict/ });
    for (let i = 0; i < 2; i++) {
      await table.getByRole("button", { name: "Verdict" }).click();
      const order = await header.getAttribute("aria-sort");
      expect(["ascending", "descending"]).toContain(order);
      await expect(table.getByRole("row").nth(order === "descending" ? 1 : 2).textContent()).resolves.toContain("Saturated time course");
    }
    await screenshot(page, "checks-01-page");
    await page.goto(`${baseUrl}/labs/${lab.labId}/datasets`);
    await page.getByRole("link", { name: "Acquisition check of Saturated time course: re-image" }).waitFor();
  });

  it("the report says where the saturation is, advises, and plots it over t and z", async () => {
    const page = person.page;
    await page.goto(`${baseUrl}/labs/${lab.labId}/datasets/${saturatedId}/check`);
    await page.getByRole("heading", { name: /Acquisition check: Saturated time course/ }).waitFor();
    const text = (await page.locator("main").textContent()) ?? "";
    expect(text).toContain("of pixels (24) at the 4095 ceiling in t 4, z 1–2");
    expect(text).toContain("Shorten the exposure");
    for (const name of ["Share of pixels at the ceiling over t", "Share of pixels at the ceiling over z", "Histogram of Channel 1 over the whole stack, log count axis, ceiling at 4095"]) {
      await page.getByRole("img", { name }).waitFor();
    }
    await screenshot(page, "checks-02-report");
  });

  it("the owner loosens the limits and the verdict follows", async () => {
    const page = person.page;
    await page.goto(`${baseUrl}/labs/${lab.labId}/checks`);
    await page.getByLabel("Re-image from this share at the ceiling (whole stack)").fill("10");
    await page.getByLabel("Re-image from this share at the ceiling in one plane").fill("50");
    await page.getByRole("button", { name: "Save limits" }).click();
    await page.getByText("Saved; verdicts are recomputed.").waitFor();
    const row = page.getByRole("table", { name: "Acquisition checks of the lab's datasets" }).getByRole("row", { name: /Saturated time course/ });
    await expect.poll(() => row.textContent()).toContain("caution");
    await screenshot(page, "checks-03-limits");
  });
});
