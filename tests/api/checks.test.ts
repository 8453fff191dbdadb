// The acquisition check through HTTP on stacks written for the test, whose answers are known by
// construction: a saturated time point, left-justified 12-bit data, a clipped dark level. Rules and
// their sources: lib/imaging/acquisition-check.ts (FACTS.md; thresholds are common practice).
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { DEFAULT_THRESHOLDS } from "@/lib/imaging/acquisition-check";
import { closeDb } from "@/lib/server/db";
import { writeTiff } from "@/lib/tiff/writer";
import { expectError } from "../helpers/errors";
import { labWithMembers, type LabWithMembers } from "../helpers/http";
import { uploadFile, waitForIngest } from "../helpers/uploads";

afterAll(closeDb);

const W = 16;
const H = 12;
let lab: LabWithMembers;
const ids: Record<"saturated" | "shifted" | "clipped", number> = { saturated: 0, shifted: 0, clipped: 0 };

async function upload(name: string, planes: Uint16Array[]) {
  const tiff = await writeTiff(planes, { width: W, height: H, bitsPerSample: 16 });
  const reply = await uploadFile(lab.editor, lab.labId, tiff, { fileName: `${name}.tif`, title: name, dimensions: { sizeC: 1, sizeZ: 1, sizeT: planes.length, order: "XYCZT" } });
  expect((await waitForIngest(lab.editor, reply.body.datasetId)).dataset.status).toBe("ready");
  return reply.body.datasetId as number;
}

beforeAll(async () => {
  lab = await labWithMembers();
  const ramp = (i: number) => 100 + ((i * 37) % 2900);
  // 4 time points; t = 2 (third) has 10 pixels at 4095, so the ceiling found is 4095 (12-bit).
  ids.saturated = await upload("saturated", Array.from({ length: 4 }, (_, t) => Uint16Array.from({ length: W * H }, (_, i) => (t === 2 && i < 10 ? 4095 : ramp(i)))));
  // 12-bit values shifted to the top of 16 bits: every value a multiple of 16, at most 65520.
  ids.shifted = await upload("shifted", Array.from({ length: 2 }, () => Uint16Array.from({ length: W * H }, (_, i) => (ramp(i) + (i === 5 ? 995 : 0)) * 16)));
  // A dark level clipped at 0: 10 % of the pixels are 0.
  ids.clipped = await upload("clipped", [Uint16Array.from({ length: W * H }, (_, i) => (i % 10 === 0 ? 0 : ramp(i)))]);
});

const check = (id: number) => lab.viewer.get(`/api/datasets/${id}/check`);

describe("one dataset's check", () => {
  it("counts the saturated pixels of the one time point and calls the stack re-image", async () => {
    const reply = await check(ids.saturated);
    expect(reply.status).toBe(200);
    const ch = reply.body.check.channels[0];
    expect(ch.ceiling).toBe(4095);
    expect(ch.ceilingFrom).toContain("smallest common bit depth");
    expect(ch.saturated.count).toBe(10);
    expect(ch.saturated.fraction).toBeCloseTo(10 / (4 * W * H), 12);
    expect(ch.saturated.tRanges).toBe("3");
    expect(ch.verdict).toBe("re-image");
    expect(ch.reasons[0]).toContain("at the 4095 ceiling in t 3");
    // The plot data: only t = 2 has pixels at the ceiling.
    expect(reply.body.series.map((s: { saturated: number }) => s.saturated)).toEqual([0, 0, 10 / (W * H), 0]);
  });

  it("recognises left-justified 12-bit data and says the ceiling is 65520", async () => {
    const ch = (await check(ids.shifted)).body.check.channels[0];
    expect(ch.ceiling).toBe(65520);
    expect(ch.ceilingFrom).toBe("left-justified 12-bit data (every value a multiple of 16)");
    expect(ch.notes.join(" ")).toContain("12-bit data stored left-justified");
  });

  it("flags a dark level clipped at 0", async () => {
    const ch = (await check(ids.clipped)).body.check.channels[0];
    expect(ch.zero.fraction).toBeCloseTo(Math.ceil((W * H) / 10) / (W * H), 12);
    expect(ch.verdict).toBe("re-image");
    expect(ch.advice.join(" ")).toContain("offset");
  });

  it("is for members only", async () => {
    expectError(await lab.outsider.get(`/api/datasets/${ids.saturated}/check`), 404, "not_found");
  });
});

describe("with a detector profile", () => {
  it("takes the ceiling and offset from the profile and gives photoelectrons, and follows a change of profile at once", async () => {
    const made = await lab.editor.post(`/api/labs/${lab.labId}/detector-profiles`, {
      name: `Check cam ${Date.now()}`,
      bitDepth: 14,
      offsetDn: 90,
      gain: { value: 0.5, unit: "dn_per_e" },
      readNoiseE: 2,
      saturationCapacityE: 30000,
    });
    expect(made.status, JSON.stringify(made.body)).toBe(201);
    const profileId = made.body.profile.id;
    expect((await lab.editor.patch(`/api/datasets/${ids.clipped}`, { detectorProfileId: profileId })).status).toBe(200);
    const ch = (await check(ids.clipped)).body.check.channels[0];
    expect(ch.ceiling).toBe(16383);
    expect(ch.ceilingFrom).toContain("detector profile");
    expect(ch.offset).toEqual({ dn: 90, from: "detector profile" });
    // Its 99.99 % point (2998 DN here) in photoelectrons: (2998 − 90) / 0.5; SNR √N (Poisson).
    const p9999 = (await lab.viewer.get(`/api/datasets/${ids.clipped}`)).body.channelStats[0].percentiles["99.99"];
    expect(ch.photoelectrons.p9999).toBeCloseTo((p9999 - 90) / 0.5, 9);
    expect(ch.photoelectrons.snr).toBeCloseTo(Math.sqrt((p9999 - 90) / 0.5), 9);
    expect(ch.effectiveLevels.unit).toBe("read-noise steps");
    // Without the profile the check is back to the data's own ceiling.
    expect((await lab.editor.patch(`/api/datasets/${ids.clipped}`, { detectorProfileId: null })).status).toBe(200);
    expect((await check(ids.clipped)).body.check.channels[0].ceiling).toBe(4095);
  });
});

describe("the lab's checks and its limits", () => {
  it("lists every ready dataset with its verdict", async () => {
    const reply = await lab.viewer.get(`/api/labs/${lab.labId}/checks`);
    expect(reply.status).toBe(200);
    const byId = new Map(reply.body.datasets.map((d: { datasetId: number; verdict: string }) => [d.datasetId, d.verdict]));
    expect(byId.get(ids.saturated)).toBe("re-image");
    expect(byId.get(ids.clipped)).toBe("re-image");
    expect(reply.body.thresholds).toEqual(DEFAULT_THRESHOLDS);
  });

  it("only the owner changes the limits; the verdicts follow at once", async () => {
    const looser = { ...DEFAULT_THRESHOLDS, saturatedReimage: 0.02, planeSaturatedReimage: 0.2 };
    expectError(await lab.editor.request("PUT", `/api/labs/${lab.labId}/check-thresholds`, looser), 403, "forbidden");
    const bad = await lab.owner.request("PUT", `/api/labs/${lab.labId}/check-thresholds`, { ...looser, saturatedReimage: 0 });
    expectError(bad, 400, "invalid_input");
    expect(bad.body.error.fields.saturatedReimage).toMatch(/above the caution/);
    const saved = await lab.owner.request("PUT", `/api/labs/${lab.labId}/check-thresholds`, looser);
    expect(saved.status).toBe(200);
    expect(saved.body.thresholds).toEqual(looser);
    // 10 of 768 pixels (1.3 %) is below 2 % of the stack, and 10 of 192 (5.2 %) below 20 % of a plane.
    expect((await check(ids.saturated)).body.check.channels[0].verdict).toBe("caution");
    await lab.owner.request("PUT", `/api/labs/${lab.labId}/check-thresholds`, DEFAULT_THRESHOLDS);
  });
});
