// The bench in Chromium on a demo dataset: a small stack made by the demo generator's own pieces
// (lib/imaging/synthetic.ts scene and EMVA 1288 camera model, lib/tiff/writer.ts OME-TIFF writer,
// the same way lib/server/demo/generate.ts writes the 512 × 512 demo stacks), uploaded through the
// real API. Every expected number is computed here from the generated planes, never typed in:
// the readout at a known pixel, Fit's black/white points (type-7 percentiles, Hyndman & Fan 1996,
// computed with d3-array's quantileSorted), and the values after playback moved t. It also checks
// that in Chromium the worker draws into the transferred canvas, and that the main-thread fallback
// (no transferControlToOffscreen) shows the very same pixels.
import { quantileSorted } from "d3-array";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { Locator, Page } from "playwright-core";
import { createRandom } from "@/lib/imaging/random";
import { DEMO_CAMERA, DEMO_CHANNELS, exposeCamera, makeScene, renderSignal } from "@/lib/imaging/synthetic";
import { demoOmeXml } from "@/lib/server/demo/generate";
import { writeTiff } from "@/lib/tiff/writer";
import { openBrowser, type Person, screenshot, signIn } from "../helpers/browser";
import { readPlanePixels } from "../helpers/canvas";
import { labWithMembers, type LabWithMembers } from "../helpers/http";
import { uploadFile, waitForIngest } from "../helpers/uploads";
import { baseUrl } from "../setup/test-env";

const W = 128;
const H = 128;
const Z = 2;
const T = 3;
const C = DEMO_CHANNELS.length;
const SEED = 4242;
const TITLE = "Demo cells (small)";

let lab: LabWithMembers;
let person: Person;
let datasetId: number;
/** planes[t][c][z]: the stored counts, as written. */
const planes: Uint16Array[][][] = [];

/** Same per-plane random streams as the demo generator (planeRandom in lib/server/demo/generate.ts). */
const planeRandom = (plane: number) => createRandom(Math.imul(SEED, 0x9e3779b1) ^ plane);

async function demoStack(): Promise<Uint8Array> {
  const scene = makeScene({ width: W, height: H, sizeZ: Z, sizeT: T, channels: DEMO_CHANNELS, cellCount: 6, overBrightCells: 1, seed: SEED });
  const ordered: Uint16Array[] = [];
  // XYZCT, like the demo OME-TIFF: z fastest, then channel, then time.
  for (let t = 0; t < T; t++) {
    planes.push([]);
    for (let c = 0; c < C; c++) {
      planes[t].push([]);
      for (let z = 0; z < Z; z++) {
        const plane = exposeCamera(renderSignal(scene, c, z, t), DEMO_CAMERA, planeRandom(ordered.length));
        planes[t][c].push(plane);
        ordered.push(plane);
      }
    }
  }
  const description = demoOmeXml({ name: TITLE, sizeX: W, sizeY: H, sizeZ: Z, sizeC: C, sizeT: T });
  return writeTiff(ordered, { width: W, height: H, bitsPerSample: 16, description });
}

/**
 * The brightest pixel of a plane below the ceiling (first in row order): a known pixel well above
 * the background whose value is not simply the 4095 that every clipped pixel shares.
 */
function brightest(plane: Uint16Array): { x: number; y: number } {
  let best = -1;
  for (let i = 0; i < plane.length; i++) if (plane[i] < DEMO_CAMERA.ceiling && (best < 0 || plane[i] > plane[best])) best = i;
  return { x: best % W, y: Math.floor(best / W) };
}

beforeAll(async () => {
  lab = await labWithMembers();
  const bytes = await demoStack();
  const reply = await uploadFile(lab.editor, lab.labId, bytes, { fileName: "demo-cells-small.ome.tif", title: TITLE, partSize: 256 * 1024 });
  datasetId = reply.body.datasetId;
  expect((await waitForIngest(lab.editor, datasetId)).dataset.status).toBe("ready");
  person = await openBrowser();
  await signIn(person.page, lab.viewer.email, lab.viewer.password);
});

afterAll(async () => {
  await person?.close();
});

const nuclear = DEMO_CHANNELS[0].name;

/**
 * Points at the brightest nuclear pixel of time point t (z 0) and expects the readout to show its
 * position and the generated raw value of every channel there.
 */
async function expectReadoutAtBrightest(page: Page, canvas: Locator, t: number): Promise<void> {
  const at = brightest(planes[t][0][0]);
  const box = (await canvas.boundingBox())!;
  const scale = box.width / W;
  await page.mouse.move(box.x + (at.x + 0.5) * scale, box.y + (at.y + 0.5) * scale);
  const readout = page.getByLabel("Readout");
  await readout.getByText(`x ${at.x} y ${at.y}`).waitFor();
  for (let c = 0; c < C; c++) {
    await expect.poll(() => readout.textContent()).toContain(`${DEMO_CHANNELS[c].name} ${planes[t][c][0][at.y * W + at.x]} DN`);
  }
}

describe("the bench on a demo dataset", () => {
  it("draws the plane in the worker and reads the generated raw values at a known pixel", async () => {
    const page = person.page;
    await page.goto(`${baseUrl}/labs/${lab.labId}/datasets/${datasetId}`);
    await page.getByRole("heading", { name: TITLE }).waitFor();
    await page.getByText(/first plane drawn in \d+ ms/).waitFor({ timeout: 30_000 });
    const canvas = page.getByLabel("Image plane");
    // A canvas handed to a worker has no 2D context on the page any more: the worker draws it.
    const where = await canvas.evaluate((c: HTMLCanvasElement) => {
      try {
        c.getContext("2d");
        return "main thread";
      } catch {
        return "worker";
      }
    });
    expect(where).toBe("worker");
    // …and composites through the WebAssembly kernels, which the page's CSP lets it compile.
    expect(await page.getByText(/first plane drawn in \d+ ms/).getAttribute("data-kernels")).toBe("webassembly");

    await expectReadoutAtBrightest(page, canvas, 0);
    await screenshot(page, "bench-demo-01-readout");
  });

  it("fits the black and white points to the plane's 0.1 % and 99.9 % points, and the picture changes", async () => {
    const page = person.page;
    const canvas = page.getByLabel("Image plane");
    const card = page.getByRole("region", { name: `Channel ${nuclear}` });
    await card.getByRole("spinbutton", { name: "Black point" }).fill("0");
    await card.getByRole("spinbutton", { name: "White point" }).fill("4095");
    await expect.poll(() => page.getByRole("img", { name: new RegExp(`^${nuclear}: histogram`) }).getAttribute("aria-label")).toContain("black point 0, white point 4095");
    const before = await readPlanePixels(canvas, 0, 0, W, H);
    await card.getByRole("button", { name: "Fit" }).click();
    const sorted = Array.from(planes[0][0][0]).sort((a, b) => a - b);
    // Fit rounds the black point down and the white point up to whole counts.
    const black = Math.floor(quantileSorted(sorted, 0.001)!);
    const white = Math.ceil(quantileSorted(sorted, 0.999)!);
    // The camera offset (100 DN) lifts the darkest pixels above zero: Fit moves the black point up.
    expect(black).toBeGreaterThan(0);
    await expect.poll(() => card.getByRole("spinbutton", { name: "Black point" }).inputValue()).toBe(String(black));
    await expect.poll(() => card.getByRole("spinbutton", { name: "White point" }).inputValue()).toBe(String(white));
    // A narrower range brightens the nuclear stain: the drawn picture is no longer the same.
    await expect.poll(async () => (await readPlanePixels(canvas, 0, 0, W, H)).join(",") !== before.join(","), { timeout: 10_000 }).toBe(true);
  });

  it("toggles the log count axis of the histograms", async () => {
    const page = person.page;
    const plot = page.getByRole("img", { name: new RegExp(`^${nuclear}: histogram of raw values`) });
    await expect(plot.getAttribute("aria-label")).resolves.toContain("log count axis");
    await page.getByLabel("Log counts").uncheck();
    await expect.poll(() => plot.getAttribute("aria-label")).not.toContain("log count axis");
    await page.getByLabel("Log counts").check();
    await expect.poll(() => plot.getAttribute("aria-label")).toContain("log count axis");
  });

  it("plays through time points, drawing each, and reads the generated values at the new t", async () => {
    const page = person.page;
    const canvas = page.getByLabel("Image plane");
    const framesBefore = Number(await canvas.getAttribute("data-frames"));
    await page.getByLabel("loop", { exact: true }).uncheck();
    await page.getByRole("button", { name: "▶ Play" }).click();
    // Without loop, playback stops on the last time point.
    await expect.poll(() => page.getByLabel("Time label").textContent(), { timeout: 15_000 }).toMatch(new RegExp(`^${T}/${T}`));
    await page.getByRole("button", { name: "▶ Play" }).waitFor();
    expect(Number(await canvas.getAttribute("data-frames")) - framesBefore).toBeGreaterThanOrEqual(T - 1);
    // Clicking Play scrolled the bottom bar into view; point from the top of the page.
    await page.evaluate(() => window.scrollTo(0, 0));
    await expectReadoutAtBrightest(page, canvas, T - 1);
    await expect.poll(() => new URL(page.url()).searchParams.get("t")).toBe(String(T - 1));
    await screenshot(page, "bench-demo-02-after-play");
  });

  it("draws the same pixels on the main thread where a canvas cannot go to a worker", async () => {
    const page = person.page;
    await page.getByRole("status").filter({ hasText: "View saved" }).waitFor();
    const worker = await readPlanePixels(page.getByLabel("Image plane"), 0, 0, W, H);
    // The same person on a browser without transferControlToOffscreen: the saved view (plane and
    // mappings) comes back from the server, and the main thread draws the worker's pixels.
    const other = await openBrowser();
    try {
      const p2 = other.page;
      await p2.addInitScript(() => {
        delete (HTMLCanvasElement.prototype as { transferControlToOffscreen?: unknown }).transferControlToOffscreen;
      });
      await signIn(p2, lab.viewer.email, lab.viewer.password);
      await p2.goto(`${baseUrl}/labs/${lab.labId}/datasets/${datasetId}?z=0&t=${T - 1}`);
      await p2.getByText(/first plane drawn in \d+ ms/).waitFor({ timeout: 30_000 });
      const canvas = p2.getByLabel("Image plane");
      await expect.poll(() => p2.getByLabel("Time label").textContent()).toMatch(new RegExp(`^${T}/${T}`));
      await expect.poll(() => canvas.evaluate((c: HTMLCanvasElement) => c.getContext("2d") !== null)).toBe(true);
      await expect.poll(async () => (await readPlanePixels(canvas, 0, 0, W, H)).join(","), { timeout: 10_000 }).toBe(worker.join(","));
      await screenshot(p2, "bench-demo-03-main-thread-fallback");
    } finally {
      await other.close();
    }
  });
});
