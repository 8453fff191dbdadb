// What a scientist does with the library in Chromium: upload an OME-TIFF by the file picker and watch
// it become ready; upload a plain TIFF and give its dimensions; open a dataset, verify its stored
// file, edit its metadata; a viewer sees no upload zone.
import { readFileSync } from "node:fs";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { loadStackFixture, type StackFixture } from "../imaging/stack-fixture";
import { openBrowser, type Person, screenshot, signIn } from "../helpers/browser";
import { labWithMembers, type LabWithMembers } from "../helpers/http";
import { run, tempDir, PYTHON } from "../helpers/tiff-tools";
import { sha256 } from "../helpers/uploads";
import { baseUrl } from "../setup/test-env";

let lab: LabWithMembers;
let fixture: StackFixture;
let plainPath: string;
let tmp: ReturnType<typeof tempDir>;
let editor: Person;

beforeAll(async () => {
  lab = await labWithMembers();
  fixture = loadStackFixture();
  tmp = tempDir("e2e-plain");
  plainPath = tmp.path("six-planes.tif");
  // A plain multi-page TIFF written by tifffile (no OME-XML): 6 planes of 40×30.
  run(PYTHON, ["-c", `import numpy as np, tifffile; a=(np.arange(6*30*40,dtype=np.uint16).reshape(6,30,40)%4000); tifffile.imwrite(${JSON.stringify(plainPath)}, a, photometric="minisblack", metadata=None)`]);
  editor = await openBrowser();
  await signIn(editor.page, lab.editor.email, lab.editor.password);
});

afterAll(async () => {
  await editor?.close();
  fixture?.remove();
  tmp?.remove();
});

describe("the library in the browser", () => {
  it("uploads an OME-TIFF with a progress bar and lists it as ready", async () => {
    const page = editor.page;
    await page.goto(`${baseUrl}/labs/${lab.labId}/datasets`);
    await page.getByText("No datasets yet").waitFor();
    await page.getByLabel("Choose stack files to upload").setInputFiles(fixture.omePath);
    await page.getByText("Uploaded and checked (SHA-256 matches)").waitFor();
    await page.getByRole("progressbar", { name: "Upload progress" }).waitFor();
    const row = page.getByRole("row").filter({ hasText: "stack" });
    await row.getByText("✓ Ready").waitFor({ timeout: 30_000 });
    await expect(row.getByText("2×3×2").isVisible()).resolves.toBe(true);
    await screenshot(page, "datasets-01-library");
  });

  it("asks for the dimensions of a TIFF without OME-XML and checks C·Z·T", async () => {
    const page = editor.page;
    await page.getByLabel("Choose stack files to upload").setInputFiles(plainPath);
    const form = page.getByRole("form", { name: "Dimensions of 6 planes" });
    await form.waitFor();
    await form.getByLabel("Channels C").fill("4");
    await form.getByRole("button", { name: "Upload" }).click();
    await form.getByText("C·Z·T is 24, but the file holds 6 planes.").waitFor();
    await screenshot(page, "datasets-02-dimensions");
    await form.getByLabel("Channels C").fill("2");
    await form.getByLabel("Time points").fill("3");
    await form.getByRole("button", { name: "Upload" }).click();
    const row = page.getByRole("row").filter({ hasText: "six-planes" });
    await row.getByText("✓ Ready").waitFor({ timeout: 30_000 });
    await expect(row.getByText("2×1×3").isVisible()).resolves.toBe(true);
  });

  it("opens a dataset, verifies the stored file and saves metadata", async () => {
    const page = editor.page;
    await page.getByRole("link", { name: "stack", exact: true }).click();
    // The title opens the bench; the details page is one click from there.
    await page.getByRole("link", { name: "Details" }).click();
    await page.waitForURL(/\/details$/);
    await page.getByRole("heading", { name: "stack", exact: true }).waitFor();
    const digest = sha256(new Uint8Array(readFileSync(fixture.omePath)));
    await page.getByText(digest).waitFor();
    await page.getByRole("button", { name: "Verify stored file" }).click();
    await page.getByText("✓ Match").waitFor();
    await page.getByRole("cell", { name: "nuclei" }).waitFor();
    await page.getByLabel("Title").fill("Spindle stack, fixed cells");
    await page.getByLabel("Experiment").fill("Spindle assembly 2026-11");
    await page.getByRole("button", { name: "Save metadata" }).click();
    await page.getByRole("status").filter({ hasText: "Saved." }).waitFor();
    await page.getByRole("heading", { name: "Spindle stack, fixed cells" }).waitFor();
    await screenshot(page, "datasets-03-details");
  });

  it("shows a viewer the library without an upload zone", async () => {
    const viewer = await openBrowser();
    try {
      await signIn(viewer.page, lab.viewer.email, lab.viewer.password);
      await viewer.page.goto(`${baseUrl}/labs/${lab.labId}/datasets`);
      await viewer.page.getByRole("link", { name: "Spindle stack, fixed cells", exact: true }).waitFor();
      expect(await viewer.page.getByLabel("Choose stack files to upload").count()).toBe(0);
    } finally {
      await viewer.close();
    }
  });
});
