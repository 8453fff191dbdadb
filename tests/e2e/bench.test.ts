// The bench in Chromium on a real stack: the worker decodes the plane by HTTP range, the readout
// shows the stored raw value at a known pixel, Fit sets black/white from this plane's exact
// percentiles, the log histogram toggles, playback advances t. Reference values: numpy on the same
// seeded data (tests/fixtures/make_tiffs.py; numpy.percentile is Hyndman & Fan 1996 type 7).
import { readFileSync } from "node:fs";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { loadStackFixture, PERCENTS, type StackFixture } from "../imaging/stack-fixture";
import { openBrowser, type Person, screenshot, signIn } from "../helpers/browser";
import { planePixelHex } from "../helpers/canvas";
import { labWithMembers, type LabWithMembers } from "../helpers/http";
import { PYTHON, run, tempDir } from "../helpers/tiff-tools";
import { uploadFile, waitForIngest } from "../helpers/uploads";
import { baseUrl } from "../setup/test-env";

let lab: LabWithMembers;
let fixture: StackFixture;
let datasetId: number;
let person: Person;

beforeAll(async () => {
  lab = await labWithMembers();
  fixture = loadStackFixture();
  const reply = await uploadFile(lab.editor, lab.labId, new Uint8Array(readFileSync(fixture.omePath)), { title: "Bench stack" });
  datasetId = reply.body.datasetId;
  expect((await waitForIngest(lab.editor, datasetId)).dataset.status).toBe("ready");
  // A flat-field frame of 2000 DN and a dark frame of 100 DN, the same size as the stack; at (9, 4)
  // the flat equals the dark, so that pixel cannot be corrected (written by tifffile).
  const frames = tempDir("frames");
  for (const [name, value] of [["flat", 2000], ["dark", 100]] as const) {
    const path = frames.path(`${name}.tif`);
    run(PYTHON, ["-c", `import numpy as np, tifffile; a = np.full((${fixture.height}, ${fixture.width}), ${value}, np.uint16); a[4, 9] = 100; tifffile.imwrite(${JSON.stringify(path)}, a, photometric="minisblack", metadata=None)`]);
    const up = await uploadFile(lab.editor, lab.labId, new Uint8Array(readFileSync(path)), { fileName: `${name}.tif`, title: `${name} frame`, dimensions: { sizeC: 1, sizeZ: 1, sizeT: 1, order: "XYCZT" } });
    expect((await waitForIngest(lab.editor, up.body.datasetId)).dataset.status).toBe("ready");
  }
  frames.remove();
  person = await openBrowser();
  const page = person.page;
  await signIn(page, lab.viewer.email, lab.viewer.password);
});

afterAll(async () => {
  await person?.close();
  fixture?.remove();
});

// Plane order in the fixture is XYZCT (z fastest, then c, then t): plane index = z + 3·(c + 2·t).
const planeIndex = (c: number, z: number, t: number) => z + 3 * (c + 2 * t);

describe("the bench", () => {
  it("shows the stored raw value of every channel under the pointer", async () => {
    const page = person.page;
    await page.goto(`${baseUrl}/labs/${lab.labId}/datasets/${datasetId}`);
    await page.getByRole("heading", { name: "Bench stack" }).waitFor();
    await page.getByText(/first plane drawn in \d+ ms/).waitFor({ timeout: 30_000 });
    // Zoom to 1:1 and point at image pixel (5, 5) of z 0, t 0.
    await page.locator("[aria-label^='Bench:']").focus();
    await page.keyboard.press("1");
    const canvas = page.getByLabel("Image plane");
    await page.waitForTimeout(200);
    const box = (await canvas.boundingBox())!;
    const scale = box.width / fixture.width;
    await page.mouse.move(box.x + (5 + 0.5) * scale, box.y + (5 + 0.5) * scale);
    const readout = page.getByLabel("Readout");
    await readout.getByText("x 5 y 5").waitFor();
    for (const c of [0, 1]) {
      const expected = fixture.planes[planeIndex(c, 0, 0)][5 * fixture.width + 5];
      const name = c === 0 ? "nuclei" : "membrane";
      await expect(readout.textContent()).resolves.toContain(`${name} ${expected} DN`);
    }
    await screenshot(page, "bench-01-readout");
  });

  it("fits black and white points to this plane's 0.1 % and 99.9 % points", async () => {
    const page = person.page;
    const card = page.getByRole("region", { name: "Channel nuclei" });
    await card.getByRole("spinbutton", { name: "Black point" }).fill("0");
    await card.getByRole("spinbutton", { name: "White point" }).fill("4095");
    await card.getByRole("button", { name: "Fit" }).click();
    const ref = fixture.ref.planes[planeIndex(0, 0, 0)];
    // Fit rounds the black point down and the white point up to whole counts (type-7 percentiles).
    const black = Math.floor(ref.percentiles[PERCENTS.indexOf(0.1)]);
    const white = Math.ceil(ref.percentiles[PERCENTS.indexOf(99.9)]);
    await expect.poll(() => card.getByRole("spinbutton", { name: "Black point" }).inputValue()).toBe(String(black));
    await expect.poll(() => card.getByRole("spinbutton", { name: "White point" }).inputValue()).toBe(String(white));

    // Over the whole stack: the percentiles stored at ingest for channel 0 (numpy on all its planes).
    await page.getByLabel("Fit over").selectOption("stack");
    await card.getByRole("button", { name: "Fit" }).click();
    const stack = fixture.ref.channel0;
    await expect.poll(() => card.getByRole("spinbutton", { name: "Black point" }).inputValue()).toBe(String(Math.floor(stack.percentiles[PERCENTS.indexOf(0.1)])));
    await expect.poll(() => card.getByRole("spinbutton", { name: "White point" }).inputValue()).toBe(String(Math.ceil(stack.percentiles[PERCENTS.indexOf(99.9)])));
    // A percentile that was not stored at ingest is refused with an explanation, not approximated.
    await page.getByLabel("Fit high percentile").fill("99.5");
    await card.getByRole("button", { name: "Fit" }).click();
    await page.getByRole("alert").filter({ hasText: "Whole-stack Fit uses the percentiles stored at ingest" }).waitFor();
    await page.getByLabel("Fit high percentile").fill("99.9");
    await page.getByLabel("Fit over").selectOption("plane");
  });

  it("shows and hides the scale bar and the time stamp", async () => {
    const page = person.page;
    await page.getByLabel(/^Scale bar \d/).waitFor();
    await page.getByRole("checkbox", { name: "Scale bar" }).uncheck();
    await expect.poll(() => page.getByLabel(/^Scale bar \d/).count()).toBe(0);
    await page.getByRole("checkbox", { name: "Scale bar" }).check();
    await page.getByRole("checkbox", { name: "Time stamp" }).check();
    await expect(page.getByLabel("Time stamp on the image").textContent()).resolves.toBe("00:00:00");
  });

  it("toggles the log count axis of the histograms", async () => {
    const page = person.page;
    const plot = page.getByRole("img", { name: /nuclei: histogram of raw values/ });
    await expect(plot.getAttribute("aria-label")).resolves.toContain("log count axis");
    await page.getByLabel("Log counts").uncheck();
    await expect.poll(() => plot.getAttribute("aria-label")).not.toContain("log count axis");
  });

  it("warns that red and green channels merge for colour-blind readers and offers a safe set", async () => {
    const page = person.page;
    // The file's OME-XML colours are pure red and pure green: the classic problem pair (Wong 2011).
    const warning = page.getByRole("alert").filter({ hasText: "hard to tell apart" });
    await warning.waitFor();
    await warning.getByRole("button", { name: "Use colour-blind-safe colours" }).click();
    await expect.poll(() => warning.count()).toBe(0);
    // Magenta/green for two channels (Wong 2011; lib/imaging/colour-tables.ts).
    await expect(page.getByLabel("Colour of nuclei").inputValue()).resolves.toBe("#ff00ff");
    await expect(page.getByLabel("Colour of membrane").inputValue()).resolves.toBe("#00ff00");
  });

  it("paints pixels at the ceiling in the high mark colour and flags non-linear and simulated views", async () => {
    const page = person.page;
    await page.getByRole("region", { name: "Channel membrane" }).getByRole("button", { name: "Solo" }).click();
    await page.getByLabel("Clipping marks").check();
    const legend = page.getByLabel(/^Ceiling marked #/);
    await legend.waitFor();
    const high = (await legend.getAttribute("aria-label"))!.match(/Ceiling marked (#[0-9a-fA-F]{6})/)![1].toLowerCase();
    // In the fixture, membrane pixels (x 0…6, y 0…2) of z 0, t 0 are at the 4095 ceiling.
    await expect
      .poll(() => planePixelHex(page.getByLabel("Image plane"), 1, 1))
      .toBe(high);
    await page.getByRole("region", { name: "Channel membrane" }).getByRole("spinbutton", { name: "Gamma" }).fill("0.8");
    await page.getByText("membrane: gamma 0.8 (non-linear)").waitFor();
    await page.getByLabel("Colour vision").selectOption("deuteranopia");
    await page.getByText("colour-vision preview: deuteranopia").waitFor();
    await screenshot(page, "bench-03-marks-gamma-cvd");
    await page.getByLabel("Colour vision").selectOption("");
    await page.getByLabel("Clipping marks").uncheck();
  });

  it("corrects with a flat-field and dark frame for display only, and marks pixels it cannot correct", async () => {
    const page = person.page;
    const panel = page.getByRole("region", { name: "Flat and dark correction" });
    await panel.getByLabel("Flat-field frame", { exact: true }).selectOption({ label: "flat frame" });
    await panel.getByLabel("Dark frame", { exact: true }).selectOption({ label: "dark frame" });
    await panel.getByText("1 pixel with flat − dark ≤ 0.5 DN are shown as invalid, not divided.").waitFor();
    await panel.getByLabel(/^Apply/).check();
    await page.getByText("flat/dark corrected (display only)").waitFor();
    // Ticking the box may have scrolled the channel column into view; point from the top of the page.
    await page.evaluate(() => window.scrollTo(0, 0));
    const box = (await page.getByLabel("Image plane").boundingBox())!;
    const scale = box.width / fixture.width;
    const readout = page.getByLabel("Readout");
    // corrected = (raw − dark)/(flat − dark) × mean(flat − dark) = (raw − 100)/1900 × 1900 = raw − 100
    // (Murphy & Davidson, Fundamentals of Light Microscopy and Electronic Imaging, flat-field correction).
    await page.mouse.move(box.x + (5 + 0.5) * scale, box.y + (5 + 0.5) * scale);
    await readout.getByText("x 5 y 5").waitFor();
    const raw = fixture.planes[planeIndex(0, 0, 0)][5 * fixture.width + 5];
    await expect.poll(() => readout.textContent()).toContain(`nuclei ${raw} DN (corrected ${(raw - 100).toFixed(1)})`);
    await page.mouse.move(box.x + (9 + 0.5) * scale, box.y + (4 + 0.5) * scale);
    await readout.getByText("x 9 y 4").waitFor();
    await expect.poll(() => readout.textContent()).toContain("(corrected invalid)");
    await screenshot(page, "bench-04-correction");
    await panel.getByLabel(/^Apply/).uncheck();
    await expect.poll(() => page.getByText("flat/dark corrected (display only)").count()).toBe(0);
  });

  it("plays through time points and keeps the plane in the address", async () => {
    const page = person.page;
    await page.getByRole("button", { name: "▶ Play" }).click();
    await expect.poll(() => page.getByLabel("Time label").textContent(), { timeout: 10_000 }).toMatch(/^2\/2/);
    await page.getByRole("button", { name: "❚❚ Pause" }).click();
    await expect.poll(() => new URL(page.url()).searchParams.get("t")).not.toBeNull();
    await screenshot(page, "bench-02-after-play");
  });

  it("saves the person's view on the server and restores it on another machine", async () => {
    const page = person.page;
    const membrane = page.getByRole("region", { name: "Channel membrane" });
    await membrane.getByRole("spinbutton", { name: "Gamma" }).fill("0.7");
    await page.getByRole("status").filter({ hasText: "View saved" }).waitFor();
    // A second browser profile has no IndexedDB of its own: what it shows comes from the server.
    const other = await openBrowser();
    try {
      const p2 = other.page;
      await signIn(p2, lab.viewer.email, lab.viewer.password);
      await p2.goto(`${baseUrl}/labs/${lab.labId}/datasets/${datasetId}`);
      const m2 = p2.getByRole("region", { name: "Channel membrane" });
      await expect.poll(() => m2.getByRole("spinbutton", { name: "Gamma" }).inputValue(), { timeout: 20_000 }).toBe("0.7");
      await expect(p2.getByLabel("Colour of nuclei").inputValue()).resolves.toBe("#ff00ff");
    } finally {
      await other.close();
    }
  });

  it("saves the mappings as a private preset, applies it back, and lists it on the Presets page", async () => {
    const page = person.page;
    const preset = page.getByLabel("Preset", { exact: true });
    // A viewer may keep private presets but not share one with the lab.
    expect(await preset.locator("option[value='save-lab']").count()).toBe(0);
    const nuclei = page.getByRole("region", { name: "Channel nuclei" });
    await nuclei.getByRole("spinbutton", { name: "Black point" }).fill("150");
    await nuclei.getByRole("spinbutton", { name: "White point" }).fill("900");
    page.once("dialog", (dialog) => void dialog.accept("Nuclei 150–900"));
    await preset.selectOption("save-private");
    await page.getByText('Saved "Nuclei 150–900" (only you).').waitFor();

    await nuclei.getByRole("button", { name: "Full" }).click();
    await expect.poll(() => nuclei.getByRole("spinbutton", { name: "White point" }).inputValue()).toBe("4095");
    await preset.selectOption({ label: "Nuclei 150–900" });
    await page.getByText(/Applied "Nuclei 150–900": nuclei by name, membrane by name\./).waitFor();
    await expect(nuclei.getByRole("spinbutton", { name: "Black point" }).inputValue()).resolves.toBe("150");
    await expect(nuclei.getByRole("spinbutton", { name: "White point" }).inputValue()).resolves.toBe("900");

    await page.goto(`${baseUrl}/labs/${lab.labId}/presets`);
    await page.getByRole("cell", { name: "Nuclei 150–900", exact: true }).waitFor();
    await expect(page.getByRole("row").filter({ hasText: "Nuclei 150–900" }).getByText("only you").count()).resolves.toBe(1);
    await screenshot(page, "presets-01-page");
  });
});
