// Figure export from the bench in Chromium: the downloaded PNG holds the plane's display pixels
// unchanged (1×) or as whole-pixel blocks (2×), with the legend and footer below the image, and a
// sidecar that validates, names the file's SHA-256 and the plane, and discloses a gamma ≠ 1.
//
// Reference pixels come from numpy (/usr/bin/python3) on the raw counts that numpy itself wrote
// for the fixture (tests/fixtures/make_tiffs.py, stack.planes.u16le): neither our TIFF decoder nor
// our mapping, lookup-table or composite code is involved. The mapping is the documented one
// (lib/imaging/lut.ts): level = round-half-up(255 · t^gamma), t = (v − black)/(white − black)
// clamped to 0…1, computed for gamma 1 in exact integer arithmetic; the single-hue ramp entry is
// round-half-up(colour · level / 255) (lib/imaging/colour-tables.ts); additive blend clamps at 255.
import { createHash } from "node:crypto";
import { copyFileSync, mkdirSync, readFileSync } from "node:fs";
import { dirname, join } from "node:path";
import type { Download, Locator, Page } from "playwright-core";
import { PNG } from "pngjs";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { readTextChunks } from "@/lib/imaging/png-text";
import { FIGURE_SIDECAR_KEYWORD, figureSidecar, type FigureSidecar } from "@/lib/schemas/figure-sidecar";
import { loadStackFixture, type StackFixture } from "../imaging/stack-fixture";
import { openBrowser, type Person, screenshot, screenshotDir, signIn } from "../helpers/browser";
import { readPlanePixels } from "../helpers/canvas";
import { labWithMembers, type LabWithMembers } from "../helpers/http";
import { PYTHON, run, tempDir } from "../helpers/tiff-tools";
import { uploadFile, waitForIngest } from "../helpers/uploads";
import { baseUrl } from "../setup/test-env";

let lab: LabWithMembers;
let fixture: StackFixture;
let datasetId: number;
let fileSha256: string;
let person: Person;
const downloads = tempDir("figures");

// The plane shown: z 2 of 3, t 2 of 2 (0-based 1, 1), so a wrong plane cannot pass by accident.
const Z = 1;
const T = 1;

interface Mapping {
  c: number;
  black: number;
  white: number;
  gamma: number;
  colour: [number, number, number];
}

/** The expected RGBA of the plane (width × height × 4), computed by numpy from the raw dump. */
function numpyComposite(channels: Mapping[]): Buffer {
  const out = downloads.path(`expected-${Math.random().toString(36).slice(2)}.rgba`);
  const script = `
import json, sys
import numpy as np
raw_path, out_path, args = sys.argv[1], sys.argv[2], json.loads(sys.argv[3])
h, w, sz, sc = args["height"], args["width"], args["sizeZ"], args["sizeC"]
planes = np.fromfile(raw_path, dtype="<u2").reshape(-1, h, w).astype(np.int64)
acc = np.zeros((h, w, 3), dtype=np.int64)
for ch in args["channels"]:
    v = planes[args["z"] + sz * (ch["c"] + sc * args["t"])]
    b, wh, g = ch["black"], ch["white"], ch["gamma"]
    span = wh - b
    d = np.clip(v - b, 0, span)
    if g == 1:
        level = (2 * 255 * d + span) // (2 * span)  # round half up of 255*d/span, exact in integers
    else:
        level = np.floor(255 * np.power(d / span, g) + 0.5).astype(np.int64)
    for k in range(3):
        acc[:, :, k] += (ch["colour"][k] * level * 2 + 255) // 510
rgba = np.full((h, w, 4), 255, dtype=np.uint8)
rgba[:, :, :3] = np.minimum(acc, 255)
rgba.tofile(out_path)
`;
  const args = { width: fixture.width, height: fixture.height, sizeZ: 3, sizeC: 2, z: Z, t: T, channels };
  run(PYTHON, ["-c", script, join(dirname(fixture.omePath), "stack.planes.u16le"), out, JSON.stringify(args)]);
  return readFileSync(out);
}

/** The RGBA of a rectangle of a decoded PNG. */
function region(png: PNG, rect: { x: number; y: number; width: number; height: number }): Buffer {
  const out = Buffer.alloc(rect.width * rect.height * 4);
  for (let y = 0; y < rect.height; y++) png.data.copy(out, y * rect.width * 4, ((rect.y + y) * png.width + rect.x) * 4, ((rect.y + y) * png.width + rect.x + rect.width) * 4);
  return out;
}

/** Nearest-neighbour enlargement, written out plainly for the check. */
function enlarge(rgba: Buffer, width: number, height: number, k: number): Buffer {
  const out = Buffer.alloc(width * k * height * k * 4);
  for (let y = 0; y < height * k; y++) for (let x = 0; x < width * k; x++) rgba.copy(out, (y * width * k + x) * 4, (Math.floor(y / k) * width + Math.floor(x / k)) * 4, (Math.floor(y / k) * width + Math.floor(x / k)) * 4 + 4);
  return out;
}

async function save(page: Page, button: Locator, count = 1): Promise<Download[]> {
  const events: Download[] = [];
  const done = new Promise<void>((resolve) => {
    const onDownload = (d: Download) => {
      events.push(d);
      if (events.length === count) {
        page.off("download", onDownload);
        resolve();
      }
    };
    page.on("download", onDownload);
  });
  await button.click();
  await done;
  return events;
}

async function readDownload(d: Download): Promise<Buffer> {
  const path = downloads.path(d.suggestedFilename());
  mkdirSync(screenshotDir, { recursive: true });
  await d.saveAs(path);
  return readFileSync(path);
}

/** The on-screen canvas of the bench (drawn by the bench worker where it can be), as RGBA bytes. */
async function screenPixels(page: Page): Promise<Buffer> {
  const canvas = page.getByLabel("Image plane");
  const [width, height] = await canvas.evaluate((c: HTMLCanvasElement) => [c.width, c.height]);
  return Buffer.from(await readPlanePixels(canvas, 0, 0, width, height));
}

async function setPoints(page: Page, name: string, black: number, white: number) {
  const card = page.getByRole("region", { name: `Channel ${name}` });
  await card.getByRole("spinbutton", { name: "Black point" }).fill(String(black));
  await card.getByRole("spinbutton", { name: "White point" }).fill(String(white));
}

const dialogOf = (page: Page) => page.getByRole("dialog", { name: "Export figure" });

async function openDialog(page: Page): Promise<Locator> {
  await page.getByRole("button", { name: "Export figure…" }).click();
  const dialog = dialogOf(page);
  await dialog.waitFor();
  await expect.poll(() => dialog.getByRole("status").textContent()).toMatch(/^\d+ × \d+ px; image/);
  return dialog;
}

beforeAll(async () => {
  lab = await labWithMembers();
  fixture = loadStackFixture();
  const bytes = new Uint8Array(readFileSync(fixture.omePath));
  // Computed here from the bytes sent, not taken from the server.
  fileSha256 = createHash("sha256").update(bytes).digest("hex");
  const reply = await uploadFile(lab.editor, lab.labId, bytes, { title: "Figure stack" });
  datasetId = reply.body.datasetId;
  expect((await waitForIngest(lab.editor, datasetId)).dataset.status).toBe("ready");
  person = await openBrowser();
  const page = person.page;
  await signIn(page, lab.viewer.email, lab.viewer.password);
  await page.goto(`${baseUrl}/labs/${lab.labId}/datasets/${datasetId}?z=${Z}&t=${T}`);
  await page.getByRole("heading", { name: "Figure stack" }).waitFor();
  await page.getByText(/first plane drawn in \d+ ms/).waitFor({ timeout: 30_000 });
});

afterAll(async () => {
  await person?.close();
  fixture?.remove();
  downloads.remove();
});

// The file's OME-XML colours: nuclei pure red, membrane pure green.
const RED: [number, number, number] = [255, 0, 0];
const GREEN: [number, number, number] = [0, 255, 0];
const MAGENTA: [number, number, number] = [255, 0, 255];

describe("figure export", () => {
  it("exports the plane at 1× with the image pixels unchanged, legend and footer below, and a sidecar naming the file's SHA-256 and the plane", async () => {
    const page = person.page;
    await setPoints(page, "nuclei", 150, 900);
    await setPoints(page, "membrane", 200, 3800);
    const expected = numpyComposite([
      { c: 0, black: 150, white: 900, gamma: 1, colour: RED },
      { c: 1, black: 200, white: 3800, gamma: 1, colour: GREEN },
    ]);
    // What the bench draws on screen (the worker's composite) equals numpy's.
    await expect.poll(async () => (await screenPixels(page)).equals(expected), { timeout: 15_000 }).toBe(true);

    const dialog = await openDialog(page);
    await expect(dialog.getByRole("radio", { name: /^1×/ }).isChecked()).resolves.toBe(true);
    await screenshot(page, "figure-01-dialog");
    const [pngDownload] = await save(page, dialog.getByRole("button", { name: "Download PNG" }));
    const [jsonDownload] = await save(page, dialog.getByRole("button", { name: "Download sidecar JSON" }));
    expect(pngDownload.suggestedFilename()).toBe(`Figure stack-z${Z + 1}-t${T + 1}.png`);
    const pngBytes = await readDownload(pngDownload);
    const sidecar = figureSidecar.parse(JSON.parse((await readDownload(jsonDownload)).toString("utf8")));

    // (c) The sidecar validates and ties the figure to the exact file and plane.
    expect(sidecar.dataset.sha256).toBe(fileSha256);
    expect(sidecar.dataset.id).toBe(datasetId);
    expect(sidecar.plane).toEqual({ z: Z, t: T, c: [0, 1] });
    // The app version of the build that made the figure (package.json, set at build time).
    expect(sidecar.app.version).toBe(JSON.parse(readFileSync(new URL("../../package.json", import.meta.url), "utf8")).version);
    expect(sidecar.channels.map(({ name, black, white, gamma, colour }) => ({ name, black, white, gamma, colour }))).toEqual([
      { name: "nuclei", black: 150, white: 900, gamma: 1, colour: "#ff0000" },
      { name: "membrane", black: 200, white: 3800, gamma: 1, colour: "#00ff00" },
    ]);
    expect(sidecar.output.scale).toBe(1);
    expect(sidecar.nonLinear).toEqual([]);
    expect(sidecar.disclosure).toMatch(/^Display mapping, not the data:/);
    // 0.1625 µm pixels × 50 px = 8.1 µm wide: a 1 µm bar (12 %).
    expect(sidecar.pixelSizeUm).toBeCloseTo(0.1625, 10);
    expect(sidecar.output.scaleBar?.um).toBe(1);

    // The PNG (pngjs checks every chunk's CRC) carries the same sidecar in an iTXt chunk.
    const png = PNG.sync.read(pngBytes);
    expect(JSON.parse(readTextChunks(new Uint8Array(pngBytes))[FIGURE_SIDECAR_KEYWORD])).toEqual(sidecar);
    expect([png.width, png.height]).toEqual([sidecar.output.width, sidecar.output.height]);

    // (a) The image region holds numpy's composite byte for byte.
    const image = sidecar.output.image;
    expect([image.width, image.height]).toEqual([fixture.width, fixture.height]);
    expect(region(png, image).equals(expected)).toBe(true);
    // (b) The figure is taller than the image by the scale bar row, the legend and the footer, and
    // the band right under the image and the margins beside it are plain background: nothing is drawn over or against the data.
    expect(png.height).toBeGreaterThan(image.y + image.height + 4 * 12);
    const white = Buffer.alloc(png.width * 4, 255);
    expect(region(png, { x: 0, y: image.y + image.height, width: png.width, height: 1 }).equals(white)).toBe(true);
    if (image.x > 0) expect(region(png, { x: 0, y: image.y, width: image.x, height: image.height }).equals(Buffer.alloc(image.x * image.height * 4, 255))).toBe(true);
    copyFileSync(downloads.path(pngDownload.suggestedFilename()), join(screenshotDir, "figure-02-exported-1x.png"));
  });

  it("exports at 2× as whole-pixel blocks and discloses a gamma other than 1", async () => {
    const page = person.page;
    // Escape closes the dialog and gives focus back to the button that opened it.
    await page.keyboard.press("Escape");
    await expect.poll(() => dialogOf(page).count()).toBe(0);
    await expect(page.evaluate(() => document.activeElement?.textContent)).resolves.toBe("Export figure…");

    await page.getByRole("region", { name: "Channel membrane" }).getByRole("spinbutton", { name: "Gamma" }).fill("0.8");
    const expected = numpyComposite([
      { c: 0, black: 150, white: 900, gamma: 1, colour: RED },
      { c: 1, black: 200, white: 3800, gamma: 0.8, colour: GREEN },
    ]);
    await expect.poll(async () => (await screenPixels(page)).equals(expected), { timeout: 15_000 }).toBe(true);

    const dialog = await openDialog(page);
    await dialog.getByRole("radio", { name: /^2×/ }).check();
    await dialog.getByLabel("Background").selectOption("black");
    await expect.poll(() => dialog.getByRole("status").textContent()).toContain(`image ${fixture.width * 2} × ${fixture.height * 2} px`);
    // The disclosure names the non-linear mapping, in the dialog and on the figure's preview.
    await expect(dialog.getByTestId("figure-disclosure").textContent()).resolves.toContain("Non-linear: gamma 0.8 on membrane");
    await expect(dialog.getByRole("img", { name: /^Figure preview/ }).getAttribute("aria-label")).resolves.toContain("gamma 0.8 on membrane");
    await screenshot(page, "figure-03-dialog-2x-gamma");
    const files = await save(page, dialog.getByRole("button", { name: "Download both" }), 2);
    const pngDownload = files.find((d) => d.suggestedFilename().endsWith(".png"))!;
    const jsonDownload = files.find((d) => d.suggestedFilename().endsWith(".json"))!;
    const pngBytes = await readDownload(pngDownload);
    const sidecar = figureSidecar.parse(JSON.parse((await readDownload(jsonDownload)).toString("utf8")));
    expect(sidecar.output.scale).toBe(2);
    expect(sidecar.nonLinear).toEqual(["gamma 0.8 on membrane"]);
    expect(sidecar.disclosure).toContain("Non-linear: gamma 0.8 on membrane");
    expect(sidecar.channels[1].gamma).toBe(0.8);
    expect(sidecar.output.scaleBar!.px).toBeCloseTo((2 * 1) / 0.1625, 6);

    const png = PNG.sync.read(pngBytes);
    const image = sidecar.output.image;
    expect([image.width, image.height]).toEqual([fixture.width * 2, fixture.height * 2]);
    expect(region(png, image).equals(enlarge(expected, fixture.width, fixture.height, 2))).toBe(true);
    expect(png.height).toBeGreaterThan(image.y + image.height + 4 * 12);
    // Slides: black background, and still nothing drawn in the band right under the image.
    expect(sidecar.output.background).toBe("black");
    const black = Buffer.alloc(png.width * 4);
    for (let i = 3; i < black.length; i += 4) black[i] = 255;
    expect(region(png, { x: 0, y: image.y + image.height, width: png.width, height: 1 }).equals(black)).toBe(true);
    const embedded = JSON.parse(readTextChunks(new Uint8Array(pngBytes))[FIGURE_SIDECAR_KEYWORD]) as FigureSidecar;
    expect(embedded.disclosure).toBe(sidecar.disclosure);
    copyFileSync(downloads.path(pngDownload.suggestedFilename()), join(screenshotDir, "figure-04-exported-2x-gamma.png"));
  });

  it("warns about colours colour-blind readers cannot tell apart and switches to the built-in safe set", async () => {
    const page = person.page;
    await page.keyboard.press("Escape");
    await expect.poll(() => dialogOf(page).count()).toBe(0);
    // Two greens that differ mostly in lightness: lightness follows the signal, so they are flagged.
    await page.getByLabel("Colour of nuclei").fill("#00c000");
    await page.getByLabel("Colour of membrane").fill("#00ff00");
    const dialog = await openDialog(page);
    const warning = dialog.getByRole("alert").filter({ hasText: "Not colour-blind safe" });
    await warning.getByText(/nuclei and membrane are hard to tell apart/).waitFor();
    // Magenta/green for two channels (Wong, Nature Methods 8:441, 2011; lib/imaging/colour-tables.ts).
    await expect(warning.textContent()).resolves.toContain("nuclei #FF00FF");
    await expect(warning.textContent()).resolves.toContain("membrane #00FF00");
    await screenshot(page, "figure-05-colour-warning");

    // Keyboard: Tab and Shift+Tab stay inside the dialog.
    for (let i = 0; i < 25; i++) await page.keyboard.press("Tab");
    await expect(page.evaluate(() => Boolean(document.activeElement?.closest("dialog")))).resolves.toBe(true);
    for (let i = 0; i < 25; i++) await page.keyboard.press("Shift+Tab");
    await expect(page.evaluate(() => Boolean(document.activeElement?.closest("dialog")))).resolves.toBe(true);

    await warning.getByRole("button", { name: "Use colour-blind-safe colours" }).click();
    await expect.poll(() => warning.count()).toBe(0);
    await expect(page.getByLabel("Colour of nuclei").inputValue()).resolves.toBe("#ff00ff");
    await expect(page.getByLabel("Colour of membrane").inputValue()).resolves.toBe("#00ff00");
    // The dialog waits for the bench to draw the new colours, then exports them.
    await expect.poll(() => dialog.getByRole("status").textContent(), { timeout: 15_000 }).toMatch(/^\d+ × \d+ px; image/);
    await dialog.getByRole("radio", { name: /^1×/ }).check();
    await expect.poll(() => dialog.getByRole("status").textContent()).toContain(`image ${fixture.width} × ${fixture.height} px`);
    const files = await save(page, dialog.getByRole("button", { name: "Download both" }), 2);
    const sidecar = figureSidecar.parse(JSON.parse((await readDownload(files.find((d) => d.suggestedFilename().endsWith(".json"))!)).toString("utf8")));
    expect(sidecar.channels.map((ch) => ch.colour)).toEqual(["#ff00ff", "#00ff00"]);
    const png = PNG.sync.read(await readDownload(files.find((d) => d.suggestedFilename().endsWith(".png"))!));
    const expected = numpyComposite([
      { c: 0, black: 150, white: 900, gamma: 1, colour: MAGENTA },
      { c: 1, black: 200, white: 3800, gamma: 0.8, colour: GREEN },
    ]);
    expect(region(png, sidecar.output.image).equals(expected)).toBe(true);
    await dialog.getByRole("button", { name: "Close", exact: true }).click();
    await expect.poll(() => dialogOf(page).count()).toBe(0);
  });
});
