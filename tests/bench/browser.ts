/**
 * Bench speed in Chromium (npm run bench:browser): time from opening the bench to the first drawn
 * plane, and planes drawn per second while playing the invented 512 × 512 × 3-channel demo time-lapse
 * (7 z × 30 t). Starts its own database, app and ingest worker on TEST_SLOT 3, uploads the demo stack
 * through the real API, and reports figures; nothing passes or fails on time.
 */
import { readFileSync, rmSync } from "node:fs";
import { join, resolve } from "node:path";

process.env.TEST_SLOT ||= "3";
const { testEnv } = await import("../setup/test-env");
Object.assign(process.env, testEnv);
const { default: setup } = await import("../setup/global-setup");
const { openBrowser } = await import("../helpers/browser");
const { labWithMembers } = await import("../helpers/http");
const { uploadFile, waitForIngest } = await import("../helpers/uploads");
const { writeDemoFiles, DEMO_FILES } = await import("@/lib/server/demo/generate");

const teardown = await setup();
const dir = resolve(import.meta.dirname, "..", "..", ".data", "demo-files");
try {
  await writeDemoFiles(dir);
  const bytes = new Uint8Array(readFileSync(join(dir, DEMO_FILES.omeStack.name)));
  const lab = await labWithMembers();
  const reply = await uploadFile(lab.editor, lab.labId, bytes, { partSize: 16 * 1024 * 1024, fileName: DEMO_FILES.omeStack.name });
  const datasetId = reply.body.datasetId as number;
  await waitForIngest(lab.editor, datasetId, 300_000);

  const person = await openBrowser();
  const page = person.page;
  await page.goto(`${testEnv.NEXTAUTH_URL}/signin`);
  await page.locator("form[data-ready]").waitFor();
  await page.getByLabel("E-mail").fill(lab.viewer.email);
  await page.getByLabel("Password").fill(lab.viewer.password);
  await page.getByRole("button", { name: "Sign in" }).click();
  await page.waitForURL(`${testEnv.NEXTAUTH_URL}/labs`);

  const firstDraw: number[] = [];
  for (let run = 0; run < 3; run++) {
    await page.goto(`${testEnv.NEXTAUTH_URL}/labs/${lab.labId}/datasets/${datasetId}?z=3&t=0`);
    const text = await page.getByText(/first plane drawn in \d+ ms/).textContent({ timeout: 60_000 });
    firstDraw.push(Number(text!.match(/(\d+) ms/)![1]));
  }

  // Playback at the highest rate the bench offers (30/s): how many planes are actually drawn.
  const canvas = page.getByLabel("Image plane");
  await page.getByLabel("Playback rate (planes per second)").fill("30");
  const before = Number((await canvas.getAttribute("data-frames")) ?? 0);
  const started = Date.now();
  await page.getByRole("button", { name: "▶ Play" }).click();
  await page.waitForTimeout(10_000);
  await page.getByRole("button", { name: "❚❚ Pause" }).click();
  const seconds = (Date.now() - started) / 1000;
  const frames = Number((await canvas.getAttribute("data-frames")) ?? 0) - before;
  await person.close();

  const median = [...firstDraw].sort((a, b) => a - b)[1];
  console.table([
    { measure: "open the bench → first drawn plane (512×512, 3 channels)", value: `${median} ms median of 3 (${firstDraw.join(", ")})` },
    { measure: "playback, rate set to 30/s, 3 channels of 512×512", value: `${(frames / seconds).toFixed(1)} planes drawn per second (${frames} in ${seconds.toFixed(1)} s)` },
  ]);
} finally {
  await teardown();
  rmSync(testEnv.STORAGE_DIR, { recursive: true, force: true });
}
process.exit(0);
