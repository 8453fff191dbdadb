// The bench in Chromium on a real stack: the worker decodes the plane by HTTP range, the readout
// shows the stored raw value at a known pixel, Fit sets black/white from this plane's exact
// percentiles, the log histogram toggles, playback advances t. Reference values: numpy on the same
// seeded data (tests/fixtures/make_tiffs.py; numpy.percentile is Hyndman & Fan 1996 type 7).
import { readFileSync } from "node:fs";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { loadStackFixture, PERCENTS, type StackFixture } from "../imaging/stack-fixture";
import { openBrowser, screenshot, type Person } from "../helpers/browser";
import { labWithMembers, type LabWithMembers } from "../helpers/http";
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
  person = await openBrowser();
  const page = person.page;
  await page.goto(`${baseUrl}/signin`);
  await page.locator("form[data-ready]").waitFor();
  await page.getByLabel("E-mail").fill(lab.viewer.email);
  await page.getByLabel("Password").fill(lab.viewer.password);
  await page.getByRole("button", { name: "Sign in" }).click();
  await page.waitForURL(`${baseUrl}/labs`);
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
      .poll(async () =>
        page.getByLabel("Image plane").evaluate((canvas: HTMLCanvasElement) => {
          const [r, g, b] = canvas.getContext("2d")!.getImageData(1, 1, 1, 1).data;
          return `#${[r, g, b].map((v) => v.toString(16).padStart(2, "0")).join("")}`;
        }),
      )
      .toBe(high);
    await page.getByRole("region", { name: "Channel membrane" }).getByRole("spinbutton", { name: "Gamma" }).fill("0.8");
    await page.getByText("membrane: gamma 0.8 (non-linear)").waitFor();
    await page.getByLabel("Colour vision").selectOption("deuteranopia");
    await page.getByText("colour-vision preview: deuteranopia").waitFor();
    await screenshot(page, "bench-03-marks-gamma-cvd");
    await page.getByLabel("Colour vision").selectOption("");
    await page.getByLabel("Clipping marks").uncheck();
  });

  it("plays through time points and keeps the plane in the address", async () => {
    const page = person.page;
    await page.getByRole("button", { name: "▶ Play" }).click();
    await expect.poll(() => page.getByLabel("Time label").textContent(), { timeout: 10_000 }).toMatch(/^2\/2/);
    await page.getByRole("button", { name: "❚❚ Pause" }).click();
    await expect.poll(() => new URL(page.url()).searchParams.get("t")).not.toBeNull();
    await screenshot(page, "bench-02-after-play");
  });
});
