// What a presenter does on the Colour tables page in Chromium: make a table from stops, read its
// lightness note and colour-vision badge, save it, export it as CSV (the file must equal the table
// the library builds from the same stops), see a red-to-green ramp flagged, and import a bad CSV
// that names its line and stores nothing. Then the table is offered on the bench.
import { readFileSync, writeFileSync } from "node:fs";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { buildTableFromStops, tableToCsv } from "@/lib/imaging/table-editor";
import { loadStackFixture, type StackFixture } from "../imaging/stack-fixture";
import { openBrowser, type Person, screenshot, signIn } from "../helpers/browser";
import { readPlanePixels } from "../helpers/canvas";
import { labWithMembers, type LabWithMembers } from "../helpers/http";
import { tempDir } from "../helpers/tiff-tools";
import { uploadFile, waitForIngest } from "../helpers/uploads";
import { baseUrl } from "../setup/test-env";

let lab: LabWithMembers;
let person: Person;
let tmp: ReturnType<typeof tempDir>;
let fixture: StackFixture;
let datasetId: number;

beforeAll(async () => {
  lab = await labWithMembers();
  tmp = tempDir("e2e-colour-tables");
  fixture = loadStackFixture();
  const reply = await uploadFile(lab.editor, lab.labId, new Uint8Array(readFileSync(fixture.omePath)), { title: "Table stack" });
  datasetId = reply.body.datasetId;
  expect((await waitForIngest(lab.editor, datasetId)).dataset.status).toBe("ready");
  person = await openBrowser();
  const page = person.page;
  await signIn(page, lab.editor.email, lab.editor.password);
});

afterAll(async () => {
  await person?.close();
  tmp?.remove();
  fixture?.remove();
});

describe("the Colour tables page", () => {
  it("makes a table from stops, shows its L* plot and badge, saves and exports it as CSV", async () => {
    const page = person.page;
    await page.goto(`${baseUrl}/labs/${lab.labId}/colour-tables`);
    // Public tables made by other tests (any lab's) may be listed too, so the list need not be empty.
    await page.getByRole("heading", { name: "Your lab's colour tables" }).waitFor();
    await expect.poll(() => page.getByText("Loading colour tables…").count()).toBe(0);
    await expect(page.getByRole("row").filter({ hasText: "Harbour dusk" }).count()).resolves.toBe(0);
    await page.getByRole("button", { name: "New colour table" }).click();
    const form = page.getByRole("form", { name: "Colour table" });
    await form.getByLabel("Name").fill("Harbour dusk");
    await form.getByLabel("Shared with").selectOption("lab");
    // Dark navy → teal → pale yellow (the default middle stop is replaced), in CIELAB.
    await form.getByLabel("Colour of stop 1").fill("#101a40");
    await form.getByLabel("Colour of stop 2").fill("#2a8c82");
    await form.getByLabel("Colour of stop 3").fill("#f4eba6");
    await form.getByLabel("Position of stop 2", { exact: true }).fill("0.45");
    await form.getByLabel("CIELAB").check();
    await page.getByRole("img", { name: /^Lightness profile: rising monotonically/ }).waitFor();
    await page.getByText("Lightness rises monotonically").waitFor();
    await page.getByRole("region", { name: "Colour-vision verdict" }).getByText("Colour-vision safe").waitFor();
    await screenshot(page, "colour-tables-01-editor");
    await form.getByRole("button", { name: "Save colour table" }).click();
    await page.getByText("Saved. It is now in the list below and on the bench.").waitFor();
    const row = page.getByRole("row").filter({ hasText: "Harbour dusk" });
    await row.getByText("Colour-vision safe").waitFor();
    await expect(row.getByText("the lab").isVisible()).resolves.toBe(true);

    const [download] = await Promise.all([page.waitForEvent("download"), page.getByRole("link", { name: "Export CSV" }).click()]);
    expect(download.suggestedFilename()).toBe("Harbour-dusk.csv");
    const path = tmp.path("exported.csv");
    await download.saveAs(path);
    const expected = tableToCsv(
      buildTableFromStops(
        [
          { position: 0, colour: "#101a40" },
          { position: 0.45, colour: "#2a8c82" },
          { position: 1, colour: "#f4eba6" },
        ],
        "cielab",
      ).rgb,
    );
    expect(readFileSync(path, "utf8")).toBe(expected);
    await screenshot(page, "colour-tables-02-saved");
  });

  it("flags a red-to-green ramp as not colour-vision safe, naming deuteranopia", async () => {
    const page = person.page;
    await page.getByRole("button", { name: "New colour table" }).click();
    const form = page.getByRole("form", { name: "Colour table" });
    await form.getByLabel("Name").fill("Traffic light");
    await form.getByRole("button", { name: "Remove stop 2" }).click();
    await form.getByLabel("Colour of stop 1").fill("#ff0000");
    await form.getByLabel("Colour of stop 2").fill("#00ff00");
    const verdict = page.getByRole("region", { name: "Colour-vision verdict" });
    await verdict.getByText("Not colour-vision safe").waitFor();
    await verdict.getByRole("row", { name: /deuteranopia.*below threshold/i }).waitFor();
    await screenshot(page, "colour-tables-03-not-safe");
    await page.getByRole("button", { name: "Close" }).click();
  });

  it("refuses a bad CSV with its line number and imports nothing", async () => {
    const page = person.page;
    const lines = tableToCsv(buildTableFromStops([{ position: 0, colour: "#000000" }, { position: 1, colour: "#ffffff" }], "oklab").rgb).split("\n");
    lines[2] = "1,2,3"; // line 3
    const path = tmp.path("broken.csv");
    writeFileSync(path, lines.join("\n"));
    await page.getByRole("button", { name: "Import…" }).click();
    const form = page.getByRole("form", { name: "Import a colour table" });
    await form.getByLabel("File").setInputFiles(path);
    // The name defaults to the file's name once the file has been read.
    await expect.poll(() => form.getByLabel("Name").inputValue()).toBe("broken");
    await form.getByRole("button", { name: "Import" }).click();
    await form.getByText("The CSV file has a problem; nothing was imported.").waitFor();
    await form.getByText("Expected 4 values (index,r,g,b), found 3.").waitFor();
    await expect(form.getByRole("listitem").first().innerText()).resolves.toMatch(/^Line 3: /);
    await screenshot(page, "colour-tables-04-import-error");
    await form.getByRole("button", { name: "Cancel" }).click();
    await expect(page.getByRole("row").filter({ hasText: "broken" }).count()).resolves.toBe(0);
  });

  it("offers the saved table on the bench and draws with it", async () => {
    const page = person.page;
    await page.goto(`${baseUrl}/labs/${lab.labId}/datasets/${datasetId}`);
    await page.getByText(/first plane drawn in \d+ ms/).waitFor({ timeout: 30_000 });
    const membrane = page.getByRole("region", { name: "Channel membrane" });
    await membrane.getByRole("button", { name: "Solo" }).click();
    const select = membrane.getByLabel("Colour table");
    const value = await select.locator("option", { hasText: "Harbour dusk" }).getAttribute("value");
    expect(value).toMatch(/^custom-\d+$/);
    await select.selectOption(value!);
    // In the fixture, membrane pixels (x 0…6, y 0…2) of z 0, t 0 are at the 4095 ceiling, above the
    // white point: they take the table's last entry.
    const last = buildTableFromStops(
      [
        { position: 0, colour: "#101a40" },
        { position: 0.45, colour: "#2a8c82" },
        { position: 1, colour: "#f4eba6" },
      ],
      "cielab",
    ).rgb.subarray(765);
    const hex = (rgb: ArrayLike<number>) => `#${Array.from(rgb, (v) => v.toString(16).padStart(2, "0")).join("")}`;
    await expect
      .poll(async () => (await readPlanePixels(page.getByLabel("Image plane"), 1, 1, 1, 1)).slice(0, 3))
      .toEqual(Array.from(last));
    expect(hex(last)).toBe("#f4eba6");
    await screenshot(page, "colour-tables-05-bench");
  });
});
