// What a facility manager does on the Detectors page in Chromium: measure a camera from a
// photon-transfer series uploaded here (synthetic camera with a known gain), look at the plot, save
// the result as a profile, type a second camera from its data sheet in e⁻/DN and delete it, name the
// measured profile on a dataset, and read photoelectrons next to the raw value on the bench.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { DEMO_CAMERA } from "@/lib/imaging/synthetic";
import { openBrowser, type Person, screenshot, signIn } from "../helpers/browser";
import { labWithMembers, type LabWithMembers } from "../helpers/http";
import { photonTransferTiff, type SeriesFile } from "../helpers/photon-transfer";
import { uploadFile, waitForIngest } from "../helpers/uploads";
import { baseUrl } from "../setup/test-env";

let lab: LabWithMembers;
let person: Person;
let series: SeriesFile;
let datasetId: number;
const SIDE = 128;

beforeAll(async () => {
  lab = await labWithMembers();
  series = await photonTransferTiff({ side: SIDE, seed: 41 });
  const reply = await uploadFile(lab.editor, lab.labId, series.bytes, { fileName: "ptc.tif", title: "Photon-transfer series", dimensions: series.dimensions, partSize: 1024 * 1024 });
  datasetId = reply.body.datasetId;
  expect((await waitForIngest(lab.editor, datasetId)).dataset.status).toBe("ready");
  person = await openBrowser();
  const page = person.page;
  await signIn(page, lab.editor.email, lab.editor.password);
});

afterAll(async () => {
  await person?.close();
});

const number = (text: string | null) => Number((text ?? "").replace(/[^0-9.\-]/g, ""));

describe("the Detectors page", () => {
  it("measures the gain from a photon-transfer series, shows the plot and saves it as a profile", async () => {
    const page = person.page;
    await page.goto(`${baseUrl}/labs/${lab.labId}/detectors`);
    await page.getByText("No detector profiles yet").waitFor();
    await screenshot(page, "detectors-01-empty");

    await page.getByRole("button", { name: "Measure from a dataset" }).click();
    const panel = page.getByRole("region", { name: "Measure from a dataset" });
    await panel.getByLabel("Dataset").selectOption({ label: `Photon-transfer series (${series.frames.length} planes)` });
    await panel.getByRole("button", { name: "Run the fit" }).click();
    await panel.getByRole("img", { name: /^Photon-transfer plot: variance against mean for 8 levels, 6 fitted/ }).waitFor();
    await panel.getByRole("img", { name: /^Residuals plot/ }).waitFor();
    const results = panel.getByRole("region", { name: "Fit results" });
    const gain = number(await results.locator("dt:text-is('Gain K') + dd").innerText().then((t) => t.split("DN/e⁻")[0]));
    // The synthetic camera's K is 0.5 DN/e⁻; 128 × 128 frames recover it within 3 % (EMVA 1288 Release 4.0 Linear, 2021).
    expect(gain / DEMO_CAMERA.gainDnPerE).toBeGreaterThan(0.97);
    expect(gain / DEMO_CAMERA.gainDnPerE).toBeLessThan(1.03);
    await expect(results.locator("dt:text-is('Levels fitted') + dd").innerText()).resolves.toBe("6 of 8");
    await screenshot(page, "detectors-02-fit");

    await panel.getByRole("button", { name: "Save as profile" }).click();
    const form = page.getByRole("form", { name: "Save the measurement as a profile" });
    await expect(form.getByLabel("Bit depth (bits)").inputValue()).resolves.toBe("12");
    await form.getByText(/K = 0\.\d+ DN\/e⁻ \(stored\) · [12]\.\d+ e⁻\/DN/).waitFor();
    await form.getByLabel("Name").fill("Bench camera A");
    await screenshot(page, "detectors-03-save-form");
    await form.getByRole("button", { name: "Save profile" }).click();
    await page.getByRole("status").filter({ hasText: 'Saved "Bench camera A"' }).waitFor();
    const row = page.getByRole("row").filter({ hasText: "Bench camera A" });
    await row.getByText("Measured").waitFor();
    await row.getByText("from Photon-transfer series").waitFor();
    await screenshot(page, "detectors-04-saved");
  });

  it("types a camera from its data sheet in e⁻/DN, stores K in DN/e⁻, and deletes it after asking", async () => {
    const page = person.page;
    await page.getByRole("button", { name: "New profile" }).click();
    const form = page.getByRole("form", { name: "New detector profile" });
    await form.getByLabel("Name").fill("Data-sheet camera");
    await form.getByLabel("Bit depth (bits)").fill("16");
    await form.getByLabel("Offset (DN)").fill("400");
    // Keyboard: the unit is a radio group; choose e⁻/DN, then type the data sheet's 4 e⁻/DN.
    await form.getByLabel(/^e⁻\/DN — the inverse/).check();
    await form.getByLabel("Gain (e⁻/DN)").fill("4");
    await form.getByText("K = 0.25 DN/e⁻ (stored) · 4 e⁻/DN").waitFor();
    await form.getByLabel("Offset (DN)").fill("70000");
    await form.getByRole("button", { name: "Save profile" }).click();
    await form.getByText("At most 65 535 DN.").waitFor();
    await form.getByLabel("Offset (DN)").fill("400");
    await form.getByRole("button", { name: "Save profile" }).click();
    const row = page.getByRole("row").filter({ hasText: "Data-sheet camera" });
    await row.getByText("= 4 e⁻/DN").waitFor();
    await expect(row.innerText()).resolves.toMatch(/0\.25\s*DN\/e⁻/);
    await row.getByText("Typed in").waitFor();
    await screenshot(page, "detectors-05-typed");

    page.once("dialog", (dialog) => {
      expect(dialog.message()).toBe('Delete the detector profile "Data-sheet camera"?');
      void dialog.accept();
    });
    await row.getByRole("button", { name: "Delete Data-sheet camera" }).click();
    await page.getByRole("status").filter({ hasText: 'Deleted "Data-sheet camera"' }).waitFor();
    // The message comes once the list has been read again, so the row is already gone.
    await expect(page.getByRole("row").filter({ hasText: "Data-sheet camera" }).count()).resolves.toBe(0);
    await page.getByRole("row").filter({ hasText: "Bench camera A" }).waitFor();
  });

  it("names the profile on the dataset, and the bench shows photoelectrons next to the raw value", async () => {
    const page = person.page;
    await page.goto(`${baseUrl}/labs/${lab.labId}/datasets/${datasetId}/details`);
    const metadata = page.getByRole("form", { name: "Dataset metadata" });
    const profile = (await lab.editor.get(`/api/labs/${lab.labId}/detector-profiles`)).body.profiles.find((p: { name: string }) => p.name === "Bench camera A");
    await metadata.getByLabel("Detector profile").selectOption(String(profile.id));
    await metadata.getByRole("button", { name: "Save metadata" }).click();
    await metadata.getByRole("status").filter({ hasText: "Saved." }).waitFor();
    await screenshot(page, "detectors-06-dataset-profile");
    const detector = (await lab.editor.get(`/api/datasets/${datasetId}`)).body.dataset.detector;
    expect(detector.name).toBe("Bench camera A");

    // Time point 12 is the first frame of the 0.65 level: well above the offset.
    await page.goto(`${baseUrl}/labs/${lab.labId}/datasets/${datasetId}?t=12`);
    await page.getByText(/first plane drawn in \d+ ms/).waitFor({ timeout: 30_000 });
    await page.locator("[aria-label^='Bench:']").focus();
    await page.keyboard.press("1");
    const canvas = page.getByLabel("Image plane");
    await page.waitForTimeout(200);
    const box = (await canvas.boundingBox())!;
    const scale = box.width / SIDE;
    await page.mouse.move(box.x + (5 + 0.5) * scale, box.y + (5 + 0.5) * scale);
    const readout = page.getByLabel("Readout");
    await readout.getByText("x 5 y 5").waitFor();
    const dn = series.frames[12][5 * SIDE + 5];
    // Photoelectrons = (DN − offset) / K with the profile's own numbers (EMVA 1288 linear model).
    const electrons = (dn - detector.offsetDn) / detector.gainDnPerE;
    await expect(readout.innerText()).resolves.toMatch(new RegExp(`${dn} DN\\s*≈ ${electrons.toFixed(0)} e⁻`));
    await screenshot(page, "detectors-07-bench-readout");
  });
});
