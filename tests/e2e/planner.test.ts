// The Planner and the sampling check in Chromium. An editor fills the planner with the storage check
// values (a 2000 × 2000 plane at 2 bytes is 8 MB; 2 channels × 80 slices ≈ 1.28 GB per time point —
// common practice, no published source; 40× → 5× is 64× the area, geometry) and reads the results
// in decimal and binary units; the address alone carries the plan to a second person's browser.
// Then the editor types an objective NA on a dataset page and reads the Nyquist verdicts.
import { deflateSync } from "node:zlib";
import { readFileSync } from "node:fs";
import type { Page } from "playwright-core";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { formatBinary, formatDecimal } from "@/lib/imaging/planner";
import { writeTiff } from "@/lib/tiff/writer";
import { loadStackFixture, type StackFixture } from "../imaging/stack-fixture";
import { openBrowser, type Person, screenshot, signIn } from "../helpers/browser";
import { labWithMembers, type LabWithMembers } from "../helpers/http";
import { uploadFile, waitForIngest } from "../helpers/uploads";
import { baseUrl } from "../setup/test-env";

let lab: LabWithMembers;
let fixture: StackFixture;
let stackId: number;
let editor: Person;
let viewer: Person;
let planUrl: string;

const plan = {
  "Width (px)": "2000",
  "Height (px)": "2000",
  Channels: "2",
  "Z-slices": "80",
  Positions: "1",
  Interval: "10",
  Duration: "1",
  "From magnification (×)": "40",
  "To magnification (×)": "5",
};

/** The text of each cell in the storage table's row whose header starts with `label`. */
async function rowCells(page: Page, label: string): Promise<string[]> {
  const row = page.getByRole("table", { name: "Storage needed" }).getByRole("row").filter({ has: page.getByRole("rowheader", { name: new RegExp(`^${label}`) }) });
  return row.locator("th, td").allInnerTexts();
}

async function expectPlanResults(page: Page) {
  expect(await rowCells(page, "One plane")).toEqual([expect.stringContaining("One plane"), "8,000,000 B", "8.00 MB", "7.63 MiB"]);
  expect(await rowCells(page, "One stack")).toEqual([expect.stringContaining("2 channels × 80 z-slices"), "1,280,000,000 B", "1.28 GB", "1.19 GiB"]);
  // Every 10 min for 1 h: time points at 0, 10 … 60 min = 7; 6 per hour, 144 per day.
  expect(await rowCells(page, "Per hour")).toEqual([expect.any(String), "7,680,000,000 B", "7.68 GB", "7.15 GiB"]);
  expect(await rowCells(page, "Per day")).toEqual([expect.any(String), "184,320,000,000 B", "184 GB", "172 GiB"]);
  expect(await rowCells(page, "Total")).toEqual([expect.stringContaining("7 time points, last at 1 h · 1,120 planes"), "8,960,000,000 B", "8.96 GB", "8.34 GiB"]);
  await page.getByText("covers 64× the area").waitFor();
}

beforeAll(async () => {
  lab = await labWithMembers();
  fixture = loadStackFixture();
  // The seeded OME stack (uncompressed; 461 and 510 nm, 0.1625 µm pixels, 0.5 µm z steps) and one Deflate file.
  const stack = await uploadFile(lab.editor, lab.labId, new Uint8Array(readFileSync(fixture.omePath)), { title: "Spindle stack" });
  stackId = stack.body.datasetId;
  expect((await waitForIngest(lab.editor, stackId)).dataset.status).toBe("ready");
  const ramp = (k: number) => Uint16Array.from({ length: 64 * 64 }, (_, i) => ((i % 64) * 50 + k) % 4096);
  const deflated = await writeTiff([ramp(0), ramp(1)], { width: 64, height: 64, bitsPerSample: 16, compression: "deflate", predictor: true, compress: (b) => new Uint8Array(deflateSync(b)) });
  const compressed = await uploadFile(lab.editor, lab.labId, deflated, { fileName: "ramp.tif", dimensions: { sizeC: 1, sizeZ: 1, sizeT: 2, order: "XYCZT" } });
  expect((await waitForIngest(lab.editor, compressed.body.datasetId)).dataset.status).toBe("ready");
  editor = await openBrowser();
  await signIn(editor.page, lab.editor.email, lab.editor.password);
});

afterAll(async () => {
  await editor?.close();
  await viewer?.close();
  fixture?.remove();
});

describe("the planner", () => {
  it("turns typed inputs into sizes in both units, with messages for bad fields, and keeps them in the address", async () => {
    const page = editor.page;
    await page.goto(`${baseUrl}/labs/${lab.labId}/planner`);
    await page.getByRole("heading", { name: "Planner" }).waitFor();
    // Mark this document: a full page load would lose the mark.
    await page.evaluate(() => ((window as unknown as { plannerMark: number }).plannerMark = 1));
    for (const [label, value] of Object.entries(plan)) await page.getByLabel(label, { exact: true }).fill(value);
    await page.getByLabel("Bytes per pixel").selectOption("2");
    await page.getByLabel("Interval unit").selectOption("min");
    await page.getByLabel("Duration unit").selectOption("h");
    await expectPlanResults(page);

    // A wrong value shows its message and hides the estimate until it is fixed.
    await page.getByLabel("Channels", { exact: true }).fill("0");
    await page.getByText("The number of channels must be 1–64.").waitFor();
    await page.getByText("Correct the marked field to see the estimate.").waitFor();
    expect(await page.getByRole("table", { name: "Storage needed" }).count()).toBe(0);
    await screenshot(page, "planner-01-field-error");
    await page.getByLabel("Channels", { exact: true }).fill("2");
    await expectPlanResults(page);

    // The expected compression comes from the lab's own two datasets.
    const stats = (await lab.editor.get(`/api/labs/${lab.labId}/datasets/compression`)).body;
    const deflate = stats.codecs.find((c: { codec: string }) => c.codec === "Deflate");
    expect(deflate.datasets).toBe(1);
    const note = page.getByRole("region", { name: "Expected lossless compression" });
    await note.getByText("From this lab's 2 ready datasets").waitFor();
    await note.getByText(`${deflate.ratio.toFixed(2)}× over 1 dataset: the total would be about ${formatDecimal(8.96e9 / deflate.ratio)} (${formatBinary(8.96e9 / deflate.ratio)})`).waitFor();

    // Every input is in the address; no navigation happened on the way.
    const url = new URL(page.url());
    expect(Object.fromEntries(url.searchParams)).toMatchObject({ w: "2000", h: "2000", bpp: "2", c: "2", z: "80", p: "1", mode: "duration", iv: "10", ivu: "min", dur: "1", duru: "h", m1: "40", m2: "5" });
    expect(await page.evaluate(() => (window as unknown as { plannerMark?: number }).plannerMark)).toBe(1);
    planUrl = page.url();
    await screenshot(page, "planner-02-results");
  });

  it("shows the same inputs and results in another person's browser from the address alone", async () => {
    viewer = await openBrowser();
    await signIn(viewer.page, lab.viewer.email, lab.viewer.password);
    await viewer.page.goto(planUrl);
    await viewer.page.getByRole("heading", { name: "Planner" }).waitFor();
    for (const [label, value] of Object.entries(plan)) expect(await viewer.page.getByLabel(label, { exact: true }).inputValue(), label).toBe(value);
    expect(await viewer.page.getByLabel("Interval unit").inputValue()).toBe("min");
    await expectPlanResults(viewer.page);
    await screenshot(viewer.page, "planner-03-shared");
  });

  it("counts time points directly when asked, and then needs no duration", async () => {
    const page = viewer.page;
    await page.getByRole("radio", { name: "Number of time points" }).check();
    await page.getByLabel("Time points", { exact: true }).fill("3");
    await page.getByLabel("Interval", { exact: true }).fill("");
    expect(await rowCells(page, "Total")).toEqual([expect.stringContaining("3 time points"), "3,840,000,000 B", "3.84 GB", "3.58 GiB"]);
    expect(await rowCells(page, "Per hour")).toEqual([expect.any(String), "needs an interval"]);
    expect(new URL(page.url()).searchParams.get("mode")).toBe("count");
  });
});

describe("the sampling check on a dataset page", () => {
  it("compares the pixel size with the Nyquist pixel for each channel once the NA is typed", async () => {
    const page = editor.page;
    await page.goto(`${baseUrl}/labs/${lab.labId}/datasets/${stackId}/details`);
    const check = page.getByRole("region", { name: "Sampling check" });
    await check.waitFor();
    const table = check.getByRole("table", { name: "Lateral sampling per channel" });
    await table.getByRole("row", { name: /nuclei/ }).getByText("Needs objective NA.").waitFor();

    // NA 0.3 at 461 nm: Abbe 0.768 µm, Rayleigh 0.937 µm, Nyquist pixel 0.384 µm; 0.1625 µm pixels are 2.36× finer.
    await check.getByLabel("Objective NA").fill("0.3");
    expect(await table.getByRole("row", { name: /nuclei/ }).locator("td").allInnerTexts()).toEqual(["461 nm", "0.768 µm", "0.937 µm", "0.384 µm", "0.42", "▽ over-sampled"]);
    await check.getByText("Over-sampled 2.36×: pixels of 0.1625 µm are finer than the 0.384 µm that Nyquist needs. Binning 2×2 would still meet Nyquist and cut storage by 75 %.").waitFor();
    await check.getByRole("img", { name: /Pixel size against Nyquist, log scale/ }).waitFor();

    // NA 1.4: Abbe 0.165 µm at 461 nm, Nyquist pixel 0.0823 µm; the pixels are 1.97× too large.
    await check.getByLabel("Objective NA").fill("1.4");
    expect(await table.getByRole("row", { name: /nuclei/ }).locator("td").allInnerTexts()).toEqual(["461 nm", "0.165 µm", "0.201 µm", "0.0823 µm", "1.97", "✕ under-sampled"]);
    await check.getByText(/record detail only down to about 0\.325 µm/).first().waitFor();
    // The z check (approximate) with oil: 2·0.461·1.518/1.96 = 0.714 µm → steps of at most 0.357 µm; 0.5 µm is too coarse.
    await check.getByLabel("Immersion (for z)").selectOption("oil");
    await check.getByText(/Under-sampled in z 1\.4× \(approximate\)/).first().waitFor();
    expect(new URL(page.url()).searchParams.get("na")).toBe("1.4");
    await check.scrollIntoViewIfNeeded();
    await screenshot(page, "sampling-01-dataset");

    // A bad NA gets a message, not NaN.
    await check.getByLabel("Objective NA").fill("2");
    await check.getByText("The objective NA must be 0.01–1.7.").waitFor();
    expect(await check.innerText()).not.toMatch(/NaN/);

    // The typed values live in the address: reloading keeps them.
    await check.getByLabel("Objective NA").fill("1.4");
    await page.reload();
    await page.getByRole("region", { name: "Sampling check" }).getByText(/Under-sampled 1\.97×/).first().waitFor();
    expect(await page.getByRole("region", { name: "Sampling check" }).getByLabel("Objective NA").inputValue()).toBe("1.4");
  });
});
