// The Presets page in Chromium, with two people at once: the owner and an editor open the same lab
// preset to rename it; the owner saves first, the editor's stale save is refused with a message and a
// Reload button (reached by keyboard), and after reloading the editor saves on purpose. An editor
// imports a broken file and reads line-numbered messages, then a good one, and exports a selection.
import { readFileSync } from "node:fs";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { openBrowser, screenshot, type Person } from "../helpers/browser";
import { db } from "../helpers/db";
import { labWithMembers, type LabWithMembers } from "../helpers/http";
import { baseUrl } from "../setup/test-env";
import { closeDb } from "@/lib/server/db";

let lab: LabWithMembers;
let editor: Person;
let owner: Person;

async function signIn(person: Person, email: string, password: string) {
  await person.page.goto(`${baseUrl}/signin`);
  await person.page.locator("form[data-ready]").waitFor();
  await person.page.getByLabel("E-mail").fill(email);
  await person.page.getByLabel("Password").fill(password);
  await person.page.getByRole("button", { name: "Sign in" }).click();
  await person.page.waitForURL(`${baseUrl}/labs`);
}

const channel = (index: number, colour: string) => ({
  match: { name: ["nuclei", "membrane"][index], index },
  visible: true,
  colour,
  tableId: null,
  gamma: 1,
  range: { mode: "counts", black: 100, white: 3000 },
});
const entry = (name: string) => ({ name, blend: "add", channels: [channel(0, "#0072b2"), channel(1, "#e69f00")] });
const presetsPage = () => `${baseUrl}/labs/${lab.labId}/presets`;
const labCount = () => db().Preset.count({ where: { labId: lab.labId } });

beforeAll(async () => {
  lab = await labWithMembers();
  const created = await lab.owner.post(`/api/labs/${lab.labId}/presets`, { ...entry("Nuclei and membrane"), scope: "lab" });
  if (created.status !== 201) throw new Error(JSON.stringify(created.body));
  editor = await openBrowser();
  owner = await openBrowser();
  await signIn(editor, lab.editor.email, lab.editor.password);
  await signIn(owner, lab.owner.email, lab.owner.password);
});

afterAll(async () => {
  await editor?.close();
  await owner?.close();
  await closeDb();
});

describe("renaming the same preset in two browsers", () => {
  it("refuses the stale save with a message and a Reload button, and saves after an explicit reload", async () => {
    const id = ((await lab.owner.get(`/api/labs/${lab.labId}/presets`)).body.presets as { id: number; name: string }[]).find((p) => p.name === "Nuclei and membrane")!.id;
    // Both open the page and start renaming the same version (1).
    for (const person of [editor, owner]) {
      await person.page.goto(presetsPage());
      await person.page.getByRole("button", { name: "Rename Nuclei and membrane" }).click();
      await person.page.getByRole("heading", { name: "Rename “Nuclei and membrane”" }).waitFor();
    }
    await editor.page.getByLabel("New name").fill("Editor's nuclei");
    await owner.page.getByLabel("New name").fill("Owner's nuclei");

    await owner.page.getByRole("button", { name: "Save" }).click();
    await owner.page.getByText("Renamed to “Owner's nuclei”.").waitFor();
    await owner.page.getByRole("cell", { name: "Owner's nuclei", exact: true }).waitFor();

    // The editor's form still holds version 1: the save is refused, nothing overwritten.
    await editor.page.getByLabel("New name").press("Enter");
    const alert = editor.page.getByRole("alert").filter({ hasText: "Not saved: someone else changed this preset after you opened it." });
    await alert.waitFor();
    expect(await db().Preset.findByPk(id, { raw: true })).toMatchObject({ name: "Owner's nuclei", version: 2 });
    // The keyboard lands on Reload, and Save waits until the person has reloaded.
    await expect.poll(() => editor.page.evaluate(() => document.activeElement?.textContent?.trim())).toBe("Reload");
    expect(await editor.page.getByRole("button", { name: "Save" }).isDisabled()).toBe(true);
    await screenshot(editor.page, "presets-01-stale-rename");

    await editor.page.keyboard.press("Enter");
    await editor.page.getByText("Reloaded: the preset is now called “Owner's nuclei” (version 2).").waitFor();
    expect(await editor.page.getByLabel("New name").inputValue()).toBe("Editor's nuclei");
    await editor.page.getByRole("heading", { name: "Rename “Owner's nuclei”" }).waitFor();
    await screenshot(editor.page, "presets-02-reloaded");

    await editor.page.getByRole("button", { name: "Save" }).click();
    await editor.page.getByText("Renamed to “Editor's nuclei”.").waitFor();
    await editor.page.getByRole("cell", { name: "Editor's nuclei", exact: true }).waitFor();
    expect(await db().Preset.findByPk(id, { raw: true })).toMatchObject({ name: "Editor's nuclei", version: 3 });
  });

  it("shows a taken name as a field error, not as a conflict", async () => {
    await lab.owner.post(`/api/labs/${lab.labId}/presets`, { ...entry("Already here"), scope: "lab" });
    const page = editor.page;
    await page.goto(presetsPage());
    await page.getByRole("button", { name: "Rename Editor's nuclei" }).click();
    await page.getByLabel("New name").fill("already HERE");
    await page.getByRole("button", { name: "Save" }).click();
    await page.getByText("That name is already taken.").waitFor();
    expect(await page.getByRole("button", { name: "Reload" }).count()).toBe(0);
    // Focus is back in the field to correct it, and Escape closes the form.
    await expect.poll(() => page.evaluate(() => (document.activeElement as HTMLInputElement | null)?.value)).toBe("already HERE");
    await page.keyboard.press("Escape");
    await page.getByRole("heading", { name: /^Rename/ }).waitFor({ state: "detached" });
  });
});

describe("import and export on the page", () => {
  it("lists line-numbered problems of a broken file, imports nothing, then imports a good file", async () => {
    const page = editor.page;
    await page.goto(presetsPage());
    await page.getByRole("button", { name: "Import…" }).click();
    const panel = page.getByRole("region", { name: "Import presets" });
    await panel.waitFor();
    const before = await labCount();

    // A comma lost after "blend" on line 7: the slip shows where line 8 starts its next field.
    const good = JSON.stringify({ format: "fluxframe-presets", version: 1, presets: [entry("From file A"), entry("From file B")] }, null, 2);
    const lines = good.split("\n");
    expect(lines[6]).toBe('      "blend": "add",');
    const broken = [...lines.slice(0, 6), '      "blend": "add"', ...lines.slice(7)].join("\n");
    await panel.getByLabel("Presets file").setInputFiles({ name: "broken.json", mimeType: "application/json", buffer: Buffer.from(broken) });
    await panel.getByRole("button", { name: "Import", exact: true }).click();
    const problems = panel.getByRole("list", { name: "Problems in broken.json" });
    await problems.waitFor();
    await expect(problems.getByRole("listitem").allInnerTexts()).resolves.toEqual([expect.stringMatching(/^Line 8, column 7\s+\$\s+Expected , or } after the value of "blend"/)]);
    // The keyboard lands on the messages, not on the page's body.
    await expect.poll(() => page.evaluate(() => document.activeElement?.getAttribute("role"))).toBe("alert");
    await screenshot(page, "presets-03-import-syntax-error");

    // Two schema mistakes: a colour name and an unknown field, each with its line and JSONPath.
    const schemaBad = good.replace('"colour": "#e69f00"', '"colour": "orange"').replace('"blend": "add"', '"blend": "add",\n      "brightness": 2');
    await panel.getByLabel("Presets file").setInputFiles({ name: "schema.json", mimeType: "application/json", buffer: Buffer.from(schemaBad) });
    await panel.getByRole("button", { name: "Import", exact: true }).click();
    const items = panel.getByRole("list", { name: "Problems in schema.json" }).getByRole("listitem");
    await items.first().waitFor();
    const texts = await items.allInnerTexts();
    const orangeLine = schemaBad.split("\n").findIndex((l) => l.includes('"orange"')) + 1;
    expect(texts).toEqual([
      expect.stringMatching(/^Line 8, column 7\s+\$\.presets\[0\]\.brightness\s+Unknown field "brightness"/),
      expect.stringMatching(new RegExp(`^Line ${orangeLine}, column 21\\s+\\$\\.presets\\[0\\]\\.channels\\[1\\]\\.colour\\s+Use a colour written as #rrggbb\\.`)),
    ]);
    await expect(panel.getByRole("alert").first().innerText()).resolves.toContain("The file has 2 problems; nothing was imported.");
    await screenshot(page, "presets-04-import-schema-errors");
    expect(await labCount()).toBe(before);

    await panel.getByLabel("Presets file").setInputFiles({ name: "good.json", mimeType: "application/json", buffer: Buffer.from(good) });
    await panel.getByRole("button", { name: "Import", exact: true }).click();
    await page.getByRole("status").filter({ hasText: "Imported 2 presets into your presets." }).waitFor();
    await page.getByRole("cell", { name: "From file A", exact: true }).waitFor();
    expect(await labCount()).toBe(before + 2);
    await screenshot(page, "presets-05-imported");
  });

  it("offers new names when the file's names are taken, and stores them as '(imported)'", async () => {
    const page = editor.page;
    await page.getByRole("button", { name: "Import…" }).click();
    const panel = page.getByRole("region", { name: "Import presets" });
    const text = JSON.stringify({ format: "fluxframe-presets", version: 1, presets: [entry("From file A")] }, null, 2);
    await panel.getByLabel("Presets file").setInputFiles({ name: "again.json", mimeType: "application/json", buffer: Buffer.from(text) });
    await panel.getByRole("button", { name: "Import", exact: true }).click();
    const clashes = panel.getByRole("list", { name: "Names already in use" });
    await clashes.waitFor();
    await expect(clashes.innerText()).resolves.toMatch(/Line 6, column 15\s+\$\.presets\[0\]\.name\s+A preset named "From file A" already exists in your private presets\./);
    await screenshot(page, "presets-06-import-clash");
    await panel.getByRole("button", { name: "Import with new names" }).click();
    await page.getByRole("status").filter({ hasText: "Imported 1 preset into your presets. “From file A” was stored as “From file A (imported)”." }).waitFor();
    await page.getByRole("cell", { name: "From file A (imported)", exact: true }).waitFor();
  });

  it("exports all presets and a selection as downloadable files that import again", async () => {
    const page = editor.page;
    const [all] = await Promise.all([page.waitForEvent("download"), page.getByRole("link", { name: "Export all" }).click()]);
    expect(all.suggestedFilename()).toMatch(new RegExp(`^fluxframe-presets-lab${lab.labId}-\\d{4}-\\d{2}-\\d{2}\\.json$`));
    const allFile = JSON.parse(readFileSync((await all.path())!, "utf8"));
    expect(allFile).toMatchObject({ format: "fluxframe-presets", version: 1 });
    expect(allFile.presets.map((p: { name: string }) => p.name).sort()).toEqual(["Already here", "Editor's nuclei", "From file A", "From file A (imported)", "From file B"]);

    await page.getByRole("checkbox", { name: "Select From file B" }).check();
    await page.getByRole("checkbox", { name: "Select Editor's nuclei" }).check();
    await page.getByText("2 selected").waitFor();
    await screenshot(page, "presets-07-selection");
    const [picked] = await Promise.all([page.waitForEvent("download"), page.getByRole("link", { name: "Export selected" }).click()]);
    const pickedFile = JSON.parse(readFileSync((await picked.path())!, "utf8"));
    expect(pickedFile.presets.map((p: { name: string }) => p.name).sort()).toEqual(["Editor's nuclei", "From file B"]);
    expect(pickedFile.presets.find((p: { name: string }) => p.name === "From file B")).toEqual({ ...entry("From file B"), scope: "private" });
  });
});

describe("applying a preset from the Presets page", () => {
  it("opens the chosen dataset on the bench with the preset applied, channels matched by name", async () => {
    const { loadStackFixture } = await import("../imaging/stack-fixture");
    const { uploadFile, waitForIngest } = await import("../helpers/uploads");
    const fixture = loadStackFixture();
    try {
      const up = await uploadFile(lab.editor, lab.labId, new Uint8Array(readFileSync(fixture.omePath)), { title: "Preset target" });
      expect((await waitForIngest(lab.editor, up.body.datasetId)).dataset.status).toBe("ready");
      const made = await lab.owner.post(`/api/labs/${lab.labId}/presets`, {
        name: "Apply me",
        scope: "lab",
        blend: "add",
        channels: [
          { ...channel(0, "#0072b2"), range: { mode: "counts", black: 123, white: 2345 }, clipMarks: { high: "#ff0000", low: "#0000ff", lowMode: "percent", lowPercent: 0.5, highPercent: 0 } },
          { ...channel(1, "#e69f00"), range: { mode: "counts", black: 45, white: 3456 } },
        ],
      });
      expect(made.status).toBe(201);
      const page = owner.page;
      await page.goto(presetsPage());
      await page.getByLabel("Apply Apply me to a dataset").selectOption({ label: "Preset target" });
      await page.waitForURL(new RegExp(`/datasets/${up.body.datasetId}\\?`));
      await page.getByText(/first plane drawn in \d+ ms/).waitFor({ timeout: 30_000 });
      await page.getByText('Applied "Apply me": nuclei by name, membrane by name.').waitFor();
      const card = (name: string) => page.getByRole("region", { name: `Channel ${name}` });
      expect(await card("nuclei").getByRole("spinbutton", { name: "Black point" }).inputValue()).toBe("123");
      expect(await card("membrane").getByRole("spinbutton", { name: "White point" }).inputValue()).toBe("3456");
      // The preset's clipping-mark settings came with it.
      expect(await page.getByRole("checkbox", { name: "Clipping marks" }).isChecked()).toBe(true);
      expect(await page.getByLabel("Lowest percent marked").inputValue()).toBe("0.5");
      await screenshot(page, "presets-08-applied-from-page");
    } finally {
      fixture.remove();
    }
  });
});

describe("making a preset from scratch on the Presets page", () => {
  it("creates a two-channel lab preset from the form exactly as typed, and refuses a bad range and a taken name", async () => {
    const page = editor.page;
    await page.goto(presetsPage());
    await page.getByRole("button", { name: "New preset…" }).click();
    const panel = page.getByRole("region", { name: "New preset" });
    await panel.waitFor();
    // The keyboard starts in the name field, like the rename form.
    await expect.poll(() => page.evaluate(() => document.activeElement?.id)).toBe(await panel.getByLabel("Name", { exact: true }).getAttribute("id"));
    const before = await labCount();

    await panel.getByLabel("Name", { exact: true }).fill("already HERE");
    await panel.getByLabel("Shared with").selectOption("lab");
    await panel.getByLabel("Blend").selectOption("max");
    const first = panel.getByRole("group", { name: "Channel 1" });
    await first.getByLabel("Match name").fill("nuclei");
    await first.getByLabel("Colour", { exact: true }).fill("#56b4e9");
    await first.getByLabel("Colour table").selectOption({ label: "Viridis (blue–green–yellow)" });
    await first.getByLabel("Gamma").fill("0.8");
    await first.getByText("Non-linear display mapping").waitFor();
    await first.getByLabel("Range").selectOption("counts");
    // Black at or above white: a bad entry.
    await first.getByLabel("Black point").fill("2800");
    await first.getByLabel("White point").fill("2800");

    await panel.getByRole("button", { name: "Add channel" }).click();
    const second = panel.getByRole("group", { name: "Channel 2" });
    expect(await second.getByLabel("Index").inputValue()).toBe("1");
    expect(await second.getByLabel("Low percentile").inputValue()).toBe("0.1");
    expect(await second.getByLabel("High percentile").inputValue()).toBe("99.9");
    await second.getByLabel("Visible").uncheck();
    await second.getByLabel("Colour", { exact: true }).fill("#cc79a7");
    await second.getByLabel("Low percentile").fill("0.5");
    await second.getByLabel("High percentile").fill("99.5");
    await screenshot(page, "presets-09-new-preset-form");

    // The form checks with the route's schema: the message sits on the white point, nothing is sent.
    let posts = 0;
    page.on("request", (r) => {
      if (r.method() === "POST" && r.url().endsWith(`/api/labs/${lab.labId}/presets`)) posts++;
    });
    await panel.getByRole("button", { name: "Create preset" }).click();
    await first.getByText("The black point must be below the white point.").waitFor();
    expect(await first.getByLabel("White point").getAttribute("aria-invalid")).toBe("true");
    await expect.poll(() => page.evaluate(() => (document.activeElement as HTMLInputElement | null)?.value)).toBe("2800");
    await screenshot(page, "presets-10-new-preset-bad-range");
    expect(posts).toBe(0);
    expect(await labCount()).toBe(before);

    // A name already used by a lab preset comes back from the server as a field message on the name.
    await first.getByLabel("Black point").fill("150");
    await panel.getByRole("button", { name: "Create preset" }).click();
    await panel.getByText("That name is already taken.").waitFor();
    expect(await panel.getByLabel("Name", { exact: true }).getAttribute("aria-invalid")).toBe("true");
    expect(posts).toBe(1);
    expect(await labCount()).toBe(before);

    await panel.getByLabel("Name", { exact: true }).fill("Typed by hand");
    await panel.getByRole("button", { name: "Create preset" }).click();
    await page.getByRole("status").filter({ hasText: "Created “Typed by hand” in the lab's presets." }).waitFor();
    await panel.waitFor({ state: "detached" });
    await page.getByRole("cell", { name: "Typed by hand", exact: true }).waitFor();
    expect(await labCount()).toBe(before + 1);

    const listed = (await lab.owner.get(`/api/labs/${lab.labId}/presets`)).body.presets as { name: string; channels: unknown[] }[];
    const made = listed.find((p) => p.name === "Typed by hand");
    expect(made).toMatchObject({ name: "Typed by hand", scope: "lab", blend: "max", version: 1 });
    // Exactly what was typed, nothing added (no clip marks, no emission wavelength).
    expect(made!.channels).toEqual([
      { match: { name: "nuclei", index: 0 }, visible: true, colour: "#56b4e9", tableId: "viridis", gamma: 0.8, range: { mode: "counts", black: 150, white: 2800 } },
      { match: { index: 1 }, visible: false, colour: "#cc79a7", tableId: null, gamma: 1, range: { mode: "percentiles", low: 0.5, high: 99.5 } },
    ]);
    await screenshot(page, "presets-11-new-preset-created");
  });
});
