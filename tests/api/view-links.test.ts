// View links and saved views through HTTP against the real MariaDB: who may make and open links in
// each access mode, expiry, revocation (410, also for the page), hashed token storage, opens count,
// rate limits with Retry-After, range-only file access, the preview image, e-mail; named saved views.
import { createHash, randomUUID } from "node:crypto";
import { PNG } from "pngjs";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { closeDb } from "@/lib/server/db";
import { writeTiff } from "@/lib/tiff/writer";
import { db } from "../helpers/db";
import { expectError } from "../helpers/errors";
import { anonymous, newUser, labWithMembers, type Client, type LabWithMembers } from "../helpers/http";
import { linkInMail } from "../helpers/outbox";
import { sha256, uploadFile, waitForIngest } from "../helpers/uploads";

afterAll(closeDb);

const W = 16;
const H = 12;
let lab: LabWithMembers;
let datasetId: number;
let tiff: Uint8Array;
// Plane k (c fastest, then z, then t: order XYCZT) holds (i·5 + k·11) mod 4096 at pixel i.
const value = (k: number, i: number) => (i * 5 + k * 11) % 4096;

const state = (overrides: Record<string, unknown> = {}) => ({
  z: 2,
  t: 1,
  zoom: 3,
  pan: { x: 8, y: 6 },
  blend: "add",
  channels: [
    { c: 0, visible: true, colour: "#00ff00", tableId: null, gamma: 1, black: 100, white: 3100 },
    { c: 1, visible: false, colour: "#ff00ff", tableId: null, gamma: 1, black: 0, white: 4095 },
  ],
  ...overrides,
});
const links = () => `/api/datasets/${datasetId}/links`;
// Each test speaks from its own address, so the per-address opening limits of one test do not
// reach another (the server takes the last X-Forwarded-For entry as the caller's address).
const fromAddress = () => `198.51.100.${Math.floor(Math.random() * 250) + 1}, 203.0.113.${Math.floor(Math.random() * 250) + 1}`;
const open = (client: Client, token: string, path = "", headers: Record<string, string> = {}) =>
  client.raw("GET", `/api/v/${token}${path}`, { headers: { "x-forwarded-for": fromAddress(), ...headers } });

async function makeLink(by: Client, body: Record<string, unknown> = {}) {
  const reply = await by.post(links(), { state: state(), access: "lab", ...body });
  expect(reply.status, JSON.stringify(reply.body)).toBe(201);
  return reply.body as { link: { id: number; opens: number; status: string; expiresAt: string | null }; token: string; url: string; sent: string[] };
}

beforeAll(async () => {
  lab = await labWithMembers();
  const planes = Array.from({ length: 12 }, (_, k) => Uint16Array.from({ length: W * H }, (_, i) => value(k, i)));
  tiff = await writeTiff(planes, { width: W, height: H, bitsPerSample: 16 });
  const done = await uploadFile(lab.editor, lab.labId, tiff, { fileName: "links.tif", dimensions: { sizeC: 2, sizeZ: 3, sizeT: 2, order: "XYCZT" } });
  datasetId = done.body.datasetId;
  expect((await waitForIngest(lab.editor, datasetId)).dataset.status).toBe("ready");
});

describe("making a view link", () => {
  it("returns a 256-bit token once, stores only its SHA-256, and nowhere the token itself", async () => {
    const { token, url, link } = await makeLink(lab.editor);
    expect(token).toMatch(/^[A-Za-z0-9_-]{43}$/); // 32 random bytes in base64url
    expect(url.endsWith(`/v/${token}`)).toBe(true);
    const row = await db().ViewLink.findByPk(link.id);
    expect(row?.tokenHash).toBe(createHash("sha256").update(token).digest("hex"));
    const [rows] = await db().sequelize.query("SELECT * FROM view_links WHERE id = ?", { replacements: [link.id] });
    expect(JSON.stringify(rows)).not.toContain(token);
    // Neither the list nor the link's own answers give the token back.
    expect(JSON.stringify((await lab.viewer.get(links())).body)).not.toContain(token);
  });

  it("is for editors and owners; a viewer gets 403 and nothing is stored", async () => {
    const before = await db().ViewLink.count({ where: { datasetId } });
    expectError(await lab.viewer.post(links(), { state: state(), access: "lab" }), 403, "forbidden");
    expect(await db().ViewLink.count({ where: { datasetId } })).toBe(before);
    expectError(await lab.outsider.post(links(), { state: state(), access: "lab" }), 404, "not_found");
    expectError(await anonymous().post(links(), { state: state(), access: "lab" }), 401, "unauthenticated");
  });

  it("defaults to 30 days without download; never expiring only for lab-member links", async () => {
    const { link } = await makeLink(lab.owner);
    const days = (Date.parse(link.expiresAt!) - Date.now()) / 86_400_000;
    expect(days).toBeGreaterThan(29.9);
    expect(days).toBeLessThanOrEqual(30);
    expect((await db().ViewLink.findByPk(link.id))?.allowDownload).toBe(false);
    expect((await makeLink(lab.owner, { expiresInDays: null })).link.expiresAt).toBeNull();
    const refused = await lab.owner.post(links(), { state: state(), access: "anyone", expiresInDays: null });
    expectError(refused, 400, "invalid_input");
    expect(refused.body.error.fields.expiresInDays).toMatch(/lab members/);
  });

  it("refuses a snapshot that does not fit the dataset, and an address-only link without addresses", async () => {
    const outside = await lab.owner.post(links(), { state: state({ z: 3 }), access: "lab" });
    expectError(outside, 400, "invalid_input");
    expect(outside.body.error.fields.z).toMatch(/3 z-slices/);
    const noAddresses = await lab.owner.post(links(), { state: state(), access: "emails" });
    expectError(noAddresses, 400, "invalid_input");
    expect(noAddresses.body.error.fields.emails).toBeTruthy();
  });
});

describe("opening a link", () => {
  it("anyone-links open without an account and give the exact snapshot, without the lab's notes", async () => {
    await lab.editor.patch(`/api/datasets/${datasetId}`, { notes: "Private bench notes" });
    const { token } = await makeLink(lab.editor, { access: "anyone" });
    const reply = await open(anonymous(), token);
    expect(reply.status).toBe(200);
    expect(reply.body.link.state).toEqual(state());
    expect(reply.body.dataset.id).toBe(datasetId);
    expect(reply.body.dataset.notes).toBeNull();
    expect(reply.body.viewer).toBeNull();
    // A lab member opening the same link sees the notes and may save the view as their own.
    const member = await open(lab.viewer, token);
    expect(member.body.dataset.notes).toBe("Private bench notes");
    expect(member.body.viewer).toMatchObject({ role: "viewer", canSaveAsMine: true });
  });

  it("carries the dataset's detector profile, so a guest's readout can show photoelectrons", async () => {
    const made = await lab.editor.post(`/api/labs/${lab.labId}/detector-profiles`, { name: `Link cam ${randomUUID().slice(0, 6)}`, bitDepth: 12, offsetDn: 100, gain: { value: 0.5, unit: "dn_per_e" }, readNoiseE: 1.5, saturationCapacityE: 7990 });
    expect(made.status, JSON.stringify(made.body)).toBe(201);
    expect((await lab.editor.patch(`/api/datasets/${datasetId}`, { detectorProfileId: made.body.profile.id })).status).toBe(200);
    try {
      const { token } = await makeLink(lab.editor, { access: "anyone" });
      expect((await open(anonymous(), token)).body.dataset.detector).toMatchObject({ offsetDn: 100, gainDnPerE: 0.5 });
    } finally {
      await lab.editor.patch(`/api/datasets/${datasetId}`, { detectorProfileId: null });
    }
  });

  it("lab links need a signed-in member: 401 anonymous, 403 another lab's member", async () => {
    const { token } = await makeLink(lab.editor, { access: "lab" });
    expectError(await open(anonymous(), token), 401, "unauthenticated");
    expectError(await open(lab.outsider, token), 403, "forbidden");
    expect((await open(lab.viewer, token)).status).toBe(200);
  });

  it("address links open for the listed address after sign-in, and for no other account", async () => {
    const guest = await newUser("guest");
    const other = await newUser("other");
    const { token } = await makeLink(lab.editor, { access: "emails", emails: [guest.email.toUpperCase()] });
    expectError(await open(anonymous(), token), 401, "unauthenticated");
    expectError(await open(other, token), 403, "forbidden");
    const reply = await open(guest, token);
    expect(reply.status).toBe(200);
    expect(reply.body.viewer).toMatchObject({ role: null, canSaveAsMine: false });
  });

  it("unknown tokens are 404, malformed ones too", async () => {
    expectError(await open(anonymous(), "A".repeat(43)), 404, "not_found");
    expectError(await open(anonymous(), "short"), 404, "not_found");
  });

  it("counts opens and the last opening, but not the status check", async () => {
    const { token, link } = await makeLink(lab.editor, { access: "anyone" });
    await open(anonymous(), token, "/status");
    await open(anonymous(), token);
    await open(lab.viewer, token);
    const listed = (await lab.viewer.get(links())).body.links.find((l: { id: number }) => l.id === link.id);
    expect(listed.opens).toBe(2);
    expect(Date.now() - Date.parse(listed.lastOpenedAt)).toBeLessThan(60_000);
    expect(listed.createdBy).toBe(lab.editor.name);
  });

  it("an expired link answers 410, as does its page", async () => {
    const { token, link } = await makeLink(lab.editor, { access: "anyone", expiresInDays: 1 });
    expect((await open(anonymous(), token)).status).toBe(200);
    await db().ViewLink.update({ expiresAt: new Date(Date.now() - 1000) }, { where: { id: link.id } });
    const reply = await open(anonymous(), token);
    expectError(reply, 410, "gone");
    expect(reply.body.error.message).toMatch(/expired/);
    const page = await anonymous().raw("GET", `/v/${token}`, { headers: { "x-forwarded-for": fromAddress() } });
    expect(page.status).toBe(410);
    expect(String(page.body)).toContain("This link no longer works");
    expect((await lab.viewer.get(links())).body.links.find((l: { id: number }) => l.id === link.id).status).toBe("expired");
  });

  it("revoking works at once: the API and the page answer 410, the list says who made it and that it is revoked", async () => {
    const { token, link } = await makeLink(lab.editor, { access: "anyone" });
    const page = await anonymous().raw("GET", `/v/${token}`, { headers: { "x-forwarded-for": fromAddress() } });
    expect(page.status).toBe(200);
    expectError(await lab.viewer.delete(`${links()}/${link.id}`), 403, "forbidden");
    const revoked = await lab.owner.delete(`${links()}/${link.id}`);
    expect(revoked.status).toBe(200);
    expect(revoked.body.link.status).toBe("revoked");
    expectError(await open(anonymous(), token), 410, "gone");
    expectError(await open(anonymous(), token, "/planes"), 410, "gone");
    expectError(await open(anonymous(), token, "/file", { range: "bytes=0-7" }), 410, "gone");
    const after = await anonymous().raw("GET", `/v/${token}`, { headers: { "x-forwarded-for": fromAddress() } });
    expect(after.status).toBe(410);
    expect(String(after.body)).toMatch(/revoked/);
    // Revoking again changes nothing and is not an error.
    expect((await lab.editor.delete(`${links()}/${link.id}`)).body.link.revokedAt).toBe(revoked.body.link.revokedAt);
  });

  it("an unknown token's page answers 404 with the friendly page", async () => {
    const page = await anonymous().raw("GET", `/v/${"B".repeat(43)}`, { headers: { "x-forwarded-for": fromAddress() } });
    expect(page.status).toBe(404);
    expect(String(page.body)).toContain("No such link");
  });
});

describe("rate limits on opening", () => {
  it("one address opening one link more than 30 times a minute gets 429 with Retry-After", async () => {
    const { token } = await makeLink(lab.editor, { access: "anyone" });
    const address = `192.0.2.${Math.floor(Math.random() * 250) + 1}-${randomUUID().slice(0, 6)}`;
    const statuses: number[] = [];
    for (let i = 0; i < 31; i++) statuses.push((await anonymous().raw("GET", `/api/v/${token}`, { headers: { "x-forwarded-for": address } })).status);
    expect(statuses.slice(0, 30).every((s) => s === 200)).toBe(true);
    expect(statuses[30]).toBe(429);
    const limited = await anonymous().raw("GET", `/api/v/${token}`, { headers: { "x-forwarded-for": address } });
    expectError(limited, 429, "rate_limited");
    const retry = Number(limited.headers.get("retry-after"));
    expect(retry).toBeGreaterThanOrEqual(1);
    expect(retry).toBeLessThanOrEqual(60);
    // Another address is not affected.
    expect((await open(anonymous(), token)).status).toBe(200);
  });

  it("guessing tokens from one address is cut off after 20 misses a minute", async () => {
    const address = `192.0.2.77-${randomUUID().slice(0, 6)}`;
    const statuses: number[] = [];
    for (let i = 0; i < 21; i++) {
      statuses.push((await anonymous().raw("GET", `/api/v/${randomUUID().replace(/-/g, "").padEnd(43, "x")}`, { headers: { "x-forwarded-for": address } })).status);
    }
    expect(statuses.slice(0, 20).every((s) => s === 404)).toBe(true);
    expect(statuses[20]).toBe(429);
  });
});

describe("pixels through a link", () => {
  it("serves byte ranges of the original for the bench, but not the whole file unless download is allowed", async () => {
    const { token } = await makeLink(lab.editor, { access: "anyone" });
    const part = await anonymous().raw("GET", `/api/v/${token}/file`, { headers: { range: "bytes=8-39", "x-forwarded-for": fromAddress() } });
    expect(part.status).toBe(206);
    expect(part.headers.get("content-range")).toBe(`bytes 8-39/${tiff.length}`);
    expectError(await open(anonymous(), token, "/file"), 403, "forbidden");

    const withDownload = await makeLink(lab.editor, { access: "anyone", allowDownload: true });
    const whole = await fetch(`${(await import("../setup/test-env")).baseUrl}/api/v/${withDownload.token}/file`, { headers: { "x-forwarded-for": fromAddress() } });
    expect(whole.status).toBe(200);
    expect(sha256(new Uint8Array(await whole.arrayBuffer()))).toBe(sha256(tiff));
  });

  it("lists the plane index with the IFD offsets the bench opens planes by", async () => {
    const { token } = await makeLink(lab.editor, { access: "anyone" });
    const reply = await open(anonymous(), token, "/planes");
    expect(reply.status).toBe(200);
    expect(reply.body.planes).toHaveLength(12);
  });

  it("renders a preview PNG of the snapshot: the visible channel, mapped linearly between its black and white points", async () => {
    const { token } = await makeLink(lab.editor, { access: "anyone" });
    const reply = await fetch(`${(await import("../setup/test-env")).baseUrl}/api/v/${token}/preview`, { headers: { "x-forwarded-for": fromAddress() } });
    expect(reply.status).toBe(200);
    expect(reply.headers.get("content-type")).toBe("image/png");
    const png = PNG.sync.read(Buffer.from(await reply.arrayBuffer()));
    expect([png.width, png.height]).toEqual([W, H]); // smaller than the preview size: not scaled
    // Expected from the definition of a linear display mapping (common practice): level =
    // 255·(v − black)/(white − black), clamped, on a black-to-green ramp; channel 1 is hidden.
    // Plane of c 0, z 2, t 1 in XYCZT order: k = c + 2·z + 6·t = 10.
    let worst = 0;
    for (let i = 0; i < W * H; i++) {
      const level = Math.min(255, Math.max(0, (255 * (value(10, i) - 100)) / 3000));
      worst = Math.max(worst, Math.abs(png.data[i * 4 + 1] - level), png.data[i * 4], png.data[i * 4 + 2]);
    }
    expect(worst).toBeLessThanOrEqual(1); // rounding of the 8-bit level
    // The lab's list shows the same preview.
    const listed = await lab.viewer.raw("GET", `${links()}/${(await lab.viewer.get(links())).body.links[0].id}/preview`);
    expect(listed.status).toBe(200);
  });
});

describe("e-mailing a link", () => {
  it("sends the link to each address; the mailed link opens the snapshot", async () => {
    const to = `colleague-${randomUUID().slice(0, 8)}@example.test`;
    const made = await makeLink(lab.editor, { access: "anyone", sendTo: [to], note: "Look at z 3" });
    expect(made.sent).toEqual([to]);
    const mailed = await linkInMail(to, "/v/");
    expect(mailed).toBe(made.url);
    const token = mailed.split("/v/")[1];
    expect((await open(anonymous(), token)).body.link.state).toEqual(state());
  });
});

describe("saved views", () => {
  const views = () => `/api/datasets/${datasetId}/saved-views`;

  it("any member names a view; the lab lists it with its maker; names are unique per dataset", async () => {
    const name = `Membrane z3 ${randomUUID().slice(0, 6)}`;
    const made = await lab.viewer.post(views(), { name, state: state() });
    expect(made.status).toBe(201);
    const listed = (await lab.editor.get(views())).body.views.find((v: { id: number }) => v.id === made.body.view.id);
    expect(listed).toMatchObject({ name, owner: lab.viewer.name, state: state() });
    expectError(await lab.owner.post(views(), { name: name.toUpperCase(), state: state() }), 409, "conflict");
    expectError(await lab.outsider.get(views()), 404, "not_found");
  });

  it("refuses a view outside the dataset with the field named", async () => {
    const reply = await lab.viewer.post(views(), { name: `Bad ${randomUUID().slice(0, 6)}`, state: state({ t: 5 }) });
    expectError(reply, 400, "invalid_input");
    expect(reply.body.error.fields.t).toMatch(/2 time points/);
  });

  it("the maker, editors and owners delete a saved view; another viewer cannot", async () => {
    const made = await lab.editor.post(views(), { name: `Editor view ${randomUUID().slice(0, 6)}`, state: state() });
    const id = made.body.view.id;
    expectError(await lab.viewer.delete(`${views()}/${id}`), 403, "forbidden");
    expect((await lab.owner.delete(`${views()}/${id}`)).status).toBe(204);
    expect(await db().SavedView.count({ where: { id } })).toBe(0);
  });
});
