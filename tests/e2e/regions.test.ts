// Regions on the bench in Chromium: an editor draws a rectangle on the seeded 12-bit stack, sees
// statistics equal to numpy's on the same pixels (tests/fixtures/regions_ref.py, pixel-centre rule),
// sees saturated pixels flagged, runs a trace over t with the progress bar and exports it as CSV;
// then reshapes a rectangle by its corner handle and moves it with the arrow keys.
import { readFileSync, writeFileSync } from "node:fs";
import { spawnSync } from "node:child_process";
import { resolve } from "node:path";
import type { Download } from "playwright-core";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { loadStackFixture, type StackFixture } from "../imaging/stack-fixture";
import { openBrowser, screenshot, type Person } from "../helpers/browser";
import { labWithMembers, type LabWithMembers } from "../helpers/http";
import { PYTHON, tempDir } from "../helpers/tiff-tools";
import { uploadFile, waitForIngest } from "../helpers/uploads";
import { baseUrl } from "../setup/test-env";

let lab: LabWithMembers;
let fixture: StackFixture;
let datasetId: number;
let person: Person;
const tmp = tempDir("regions-e2e");

beforeAll(async () => {
  lab = await labWithMembers();
  fixture = loadStackFixture();
  const reply = await uploadFile(lab.editor, lab.labId, new Uint8Array(readFileSync(fixture.omePath)), { title: "Region stack" });
  datasetId = reply.body.datasetId;
  expect((await waitForIngest(lab.editor, datasetId)).dataset.status).toBe("ready");
  person = await openBrowser();
  const page = person.page;
  await page.goto(`${baseUrl}/signin`);
  await page.locator("form[data-ready]").waitFor();
  await page.getByLabel("E-mail").fill(lab.editor.email);
  await page.getByLabel("Password").fill(lab.editor.password);
  await page.getByRole("button", { name: "Sign in" }).click();
  await page.waitForURL(`${baseUrl}/labs`);
});

afterAll(async () => {
  await person?.close();
  fixture?.remove();
  tmp.remove();
});

// Plane order in the fixture: z fastest, then c, then t.
const planeIndex = (c: number, z: number, t: number) => z + 3 * (c + 2 * t);
// The rectangle drawn: image x 2…12, y 1…9 (pixel edges), so pixels x 2–11, y 1–8; it covers 10 of
// the saturated corner's pixels in channel 1 at t 0 (make_tiffs.py: data[0, 1, 0, :3, :7] = 4095).
const RECT = { kind: "rect", x: 2, y: 1, width: 10, height: 8 };

interface NumpyRegion { count: number; mean: number; sd: number; min: number; max: number; sum: number; atCeiling: number }
function numpy(plane: number, shape: object = RECT): NumpyRegion {
  const path = tmp.path("planes.u16le");
  const all = new Uint16Array(fixture.planes.length * fixture.width * fixture.height);
  fixture.planes.forEach((p, i) => all.set(p, i * p.length));
  writeFileSync(path, Buffer.from(all.buffer));
  const r = spawnSync(PYTHON, [resolve(import.meta.dirname, "..", "fixtures", "regions_ref.py")], {
    input: JSON.stringify({ width: fixture.width, height: fixture.height, ceiling: 4095, planes: path, plane, shapes: [shape] }),
    encoding: "utf8",
  });
  if (r.status !== 0) throw new Error(r.stderr);
  return JSON.parse(r.stdout).shapes[0];
}

describe("regions on the bench", () => {
  it("draws a rectangle and shows numpy's statistics of its pixels, flagging saturated ones", async () => {
    const page = person.page;
    await page.goto(`${baseUrl}/labs/${lab.labId}/datasets/${datasetId}`);
    await page.getByRole("heading", { name: "Region stack" }).waitFor();
    await page.getByText(/first plane drawn in \d+ ms/).waitFor({ timeout: 30_000 });
    const panel = page.getByRole("region", { name: "Regions" });
    await panel.getByText("No regions yet").waitFor();
    await screenshot(page, "regions-01-empty");

    await panel.getByRole("button", { name: "Rectangle" }).click();
    // 1:1, then three doublings: 8 screen pixels per image pixel, the whole image on screen.
    await page.locator("[aria-label^='Bench:']").focus();
    for (const key of ["1", "+", "+", "+"]) await page.keyboard.press(key);
    const canvas = page.getByLabel("Image plane");
    await expect.poll(() => canvas.getAttribute("data-scale")).toBe("8.000");
    await canvas.scrollIntoViewIfNeeded();
    const box = (await canvas.boundingBox())!;
    const scale = box.width / fixture.width;
    // Aim a fifth of a pixel inside each corner: drawing snaps to the nearest pixel edge.
    await page.mouse.move(box.x + (RECT.x + 0.2) * scale, box.y + (RECT.y + 0.2) * scale);
    await page.mouse.down();
    await page.mouse.move(box.x + (RECT.x + 5) * scale, box.y + (RECT.y + 4) * scale, { steps: 3 });
    await page.mouse.move(box.x + (RECT.x + RECT.width - 0.2) * scale, box.y + (RECT.y + RECT.height - 0.2) * scale, { steps: 3 });
    await page.mouse.up();

    const stats = panel.getByRole("table", { name: "Statistics of Rectangle 1" });
    await stats.waitFor();
    const region = (await lab.editor.get(`/api/datasets/${datasetId}/regions`)).body.regions[0];
    expect(region).toMatchObject({ name: "Rectangle 1", kind: "rect", geometry: { x: 2, y: 1, width: 10, height: 8 } });

    for (const [c, name] of [[0, "nuclei"], [1, "membrane"]] as const) {
      const ref = numpy(planeIndex(c, 0, 0));
      const row = stats.locator(`tr[data-channel="${name}"]`);
      const cell = async (stat: string) => Number(await row.locator(`[data-stat="${stat}"]`).textContent());
      await expect.poll(() => cell("sum")).toBe(ref.sum);
      expect(await cell("min")).toBe(ref.min);
      expect(await cell("max")).toBe(ref.max);
      // Shown to 6 significant digits.
      expect(await cell("mean")).toBeCloseTo(ref.mean, 6 - Math.ceil(Math.log10(ref.mean)));
      expect(await cell("sd")).toBeCloseTo(ref.sd, 6 - Math.ceil(Math.log10(ref.sd)));
      if (c === 1) {
        expect(ref.atCeiling).toBe(10);
        await panel.getByText(`membrane: ${ref.atCeiling} px at the ceiling (4095) — do not quantify`).waitFor();
      }
    }
    // 80 px × 0.1625 µm × 0.1625 µm (PhysicalSizeX 0.1625 µm, PhysicalSizeY 162.5 nm).
    await expect(panel.getByLabel("Area of Rectangle 1").textContent()).resolves.toContain(`area 80 px · ${Number((80 * 0.1625 * 0.1625).toPrecision(6))} µm²`);
    await screenshot(page, "regions-02-rectangle-stats");
  });

  it("runs a trace over t with a progress bar and exports tidy CSV rows equal to numpy's means", async () => {
    const page = person.page;
    const panel = page.getByRole("region", { name: "Regions" });
    // Record whether the progress bar was ever shown: with two time points it may last only a frame.
    await page.evaluate(() => {
      const w = window as unknown as { sawProgress: boolean };
      w.sawProgress = false;
      new MutationObserver(() => {
        if (document.querySelector('progress[aria-label="Trace progress"]')) w.sawProgress = true;
      }).observe(document.body, { subtree: true, childList: true });
    });
    await panel.getByRole("button", { name: "Trace over t" }).click();
    await panel.getByLabel("Trace summary").getByText("2 planes · 80 px").waitFor();
    expect(await page.evaluate(() => (window as unknown as { sawProgress: boolean }).sawProgress)).toBe(true);
    await panel.getByRole("img", { name: /Trace of Rectangle 1 over t/ }).waitFor();
    await screenshot(page, "regions-03-trace");

    const download = await Promise.all([page.waitForEvent("download"), panel.getByRole("button", { name: "Export trace (CSV)" }).click()]).then(([d]) => d as Download);
    const path = tmp.path(download.suggestedFilename());
    await download.saveAs(path);
    const lines = readFileSync(path, "utf8").trimEnd().split("\r\n");
    expect(lines[0]).toBe("dataset,region,channel,z,t,time_s,area_px,mean,sum,background_mean,count_at_ceiling,unit");
    expect(lines).toHaveLength(1 + 2 * 2);
    const rows = lines.slice(1).map((l) => l.split(","));
    for (const row of rows) {
      const [dataset, regionName, channel, z, t, timeS, areaPx, mean, sum, bg, atCeiling, unit] = row;
      const c = channel === "nuclei" ? 0 : 1;
      const ref = numpy(planeIndex(c, Number(z), Number(t)));
      expect([dataset, regionName, z, areaPx, bg, unit]).toEqual(["Region stack", "Rectangle 1", "0", "80", "", "DN"]);
      // TimeIncrement 1500 ms in the OME-XML: 1.5 s per time point.
      expect(Number(timeS)).toBe(Number(t) * 1.5);
      expect(Number(sum)).toBe(ref.sum);
      expect(Number(mean)).toBeCloseTo(ref.mean, 9);
      expect(Number(atCeiling)).toBe(ref.atCeiling);
    }
    expect(rows.map((r) => `${r[2]}@${r[4]}`).sort()).toEqual(["membrane@0", "membrane@1", "nuclei@0", "nuclei@1"]);
  });

  it("deletes the selected region with the Delete key", async () => {
    const page = person.page;
    const panel = page.getByRole("region", { name: "Regions" });
    await page.locator("[aria-label^='Bench:']").focus();
    await page.keyboard.press("Delete");
    await panel.getByText("No regions yet").waitFor();
    expect((await lab.editor.get(`/api/datasets/${datasetId}/regions`)).body.regions).toEqual([]);
  });

  it("resizes a rectangle by its bottom-right handle, saves it, and nudges it with the arrow keys", async () => {
    const page = person.page;
    const created = await lab.editor.post(`/api/datasets/${datasetId}/regions`, { name: "Box", kind: "rect", geometry: { x: 2, y: 1, width: 10, height: 8 } });
    expect(created.status).toBe(201);
    await page.reload();
    await page.getByText(/first plane drawn in \d+ ms/).waitFor({ timeout: 30_000 });
    const panel = page.getByRole("region", { name: "Regions" });
    await page.locator("[aria-label^='Bench:']").focus();
    for (const key of ["1", "+", "+", "+"]) await page.keyboard.press(key);
    const canvas = page.getByLabel("Image plane");
    await expect.poll(() => canvas.getAttribute("data-scale")).toBe("8.000");
    await expect(panel.getByLabel("Area of Box").textContent()).resolves.toContain("area 80 px");

    // No handles until the region is selected.
    expect(await page.locator("[data-handle]").count()).toBe(0);
    await panel.getByRole("listitem", { name: "Region Box" }).getByRole("button", { name: "Select" }).click();
    await expect.poll(() => page.locator("[data-handle]").count()).toBe(4);
    const handle = page.locator('[data-handle="se"]');
    // A constant size on screen whatever the zoom (9 px plus its 1.5 px stroke): halving the zoom
    // halves the rectangle but not its handles.
    const widthAt8 = (await handle.boundingBox())!.width;
    expect(widthAt8).toBeGreaterThanOrEqual(9);
    expect(widthAt8).toBeLessThan(12);
    await page.keyboard.press("-");
    await expect.poll(() => canvas.getAttribute("data-scale")).toBe("4.000");
    expect((await handle.boundingBox())!.width).toBeCloseTo(widthAt8, 1);
    await page.keyboard.press("+");
    await expect.poll(() => canvas.getAttribute("data-scale")).toBe("8.000");
    const hb = (await handle.boundingBox())!;
    await canvas.scrollIntoViewIfNeeded();
    const box = (await canvas.boundingBox())!;
    const scale = box.width / fixture.width;
    // The handle sits on the bottom-right corner (12, 9); drag it to 0.3 px off the edge (20, 15).
    await page.mouse.move(hb.x + hb.width / 2, hb.y + hb.height / 2);
    await page.mouse.down();
    await page.mouse.move(box.x + 16 * scale, box.y + 12 * scale, { steps: 3 });
    await page.mouse.move(box.x + 20.3 * scale, box.y + 14.7 * scale, { steps: 3 });
    await screenshot(page, "regions-04-handles");
    await page.mouse.up();

    // The top-left corner stays: 18 × 14 = 252 pixels (whole-pixel rectangle).
    const resized = { x: 2, y: 1, width: 18, height: 14 };
    await expect.poll(async () => (await lab.editor.get(`/api/datasets/${datasetId}/regions`)).body.regions.find((r: { name: string }) => r.name === "Box")?.geometry).toEqual(resized);
    const area = panel.getByLabel("Area of Box");
    await expect.poll(() => area.textContent()).toContain("area 252 px");
    const ref = numpy(planeIndex(0, 0, 0), { kind: "rect", ...resized });
    expect(ref.count).toBe(252);
    const sum = panel.getByRole("table", { name: "Statistics of Box" }).locator('tr[data-channel="nuclei"] [data-stat="sum"]');
    await expect.poll(async () => Number(await sum.textContent())).toBe(ref.sum);

    // Arrow keys move the selected region (1 px, Shift: 10) instead of stepping t and z; saved after a pause.
    await page.locator("[aria-label^='Bench:']").focus();
    await page.keyboard.press("ArrowRight");
    await page.keyboard.press("Shift+ArrowDown");
    await expect.poll(async () => (await lab.editor.get(`/api/datasets/${datasetId}/regions`)).body.regions.find((r: { name: string }) => r.name === "Box")?.geometry).toEqual({ ...resized, x: 3, y: 11 });
    expect(await area.textContent()).toContain("area 252 px");
    // The statistics are numpy's for the moved rectangle on the SAME plane (t 0, z 0): the arrows did
    // not also step t or z.
    const moved = numpy(planeIndex(1, 0, 0), { kind: "rect", ...resized, x: 3, y: 11 });
    const membraneSum = panel.getByRole("table", { name: "Statistics of Box" }).locator('tr[data-channel="membrane"] [data-stat="sum"]');
    await expect.poll(async () => Number(await membraneSum.textContent())).toBe(moved.sum);
    await screenshot(page, "regions-05-nudged");
  });
});
