// The access rules of every route handler, as one table: route × actor → status. The list of routes
// is read from the app/api folder, so a new handler fails this file until it has a row.
import { readdirSync, readFileSync } from "node:fs";
import { join, relative, sep } from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { closeDb } from "@/lib/server/db";
import { labSnapshot } from "../helpers/db";
import { expectErrorShape } from "../helpers/errors";
import { writeTiff } from "@/lib/tiff/writer";
import { addMember, anonymous, Client, invite, labWithMembers, newUser, resetToken, uniqueEmail, type LabWithMembers } from "../helpers/http";
import { putPart, sha256, startUpload, uploadFile, waitForIngest } from "../helpers/uploads";
import { photonTransferTiff } from "../helpers/photon-transfer";

// The five actors of each row, and two more: a guest holding a working view link ("anyone" may
// open it) and a guest holding a revoked one. Guests have no session, so outside /api/v/[token]
// they are answered exactly as anonymous callers (guestStatuses below); a link opens its own
// snapshot and nothing else.
const actors = ["anonymous", "viewer", "editor", "owner", "outsider", "link guest", "revoked-link guest"] as const;
type Actor = (typeof actors)[number];

interface Ctx {
  lab: LabWithMembers;
  who: Actor;
  client: Client;
  /** A second lab with its own owner, for invitations that any signed-in person may accept. */
  host: { owner: Client; labId: number };
  /** A pending invitation of the lab, whose link anyone may preview. */
  previewToken: string;
  /** An ingested dataset of the lab, for the read-only dataset routes. */
  datasetId: number;
}
/** `raw` sends bytes instead of JSON (upload parts). */
type Target = (ctx: Ctx) => Promise<{ path: string; body?: unknown; raw?: Uint8Array }>;
type Statuses = [anonymous: number, viewer: number, editor: number, owner: number, outsider: number];

/** Link guests: 200 through a working link and 410 through a revoked one on the link routes; elsewhere as anonymous. */
const guestStatuses = (route: string, statuses: Statuses): [number, number] => (route.startsWith("/api/v/[token]") ? [200, 410] : [statuses[0], statuses[0]]);

const L = (ctx: Ctx) => `/api/labs/${ctx.lab.labId}`;
const freshMember = async (ctx: Ctx) => (await addMember(ctx.lab.owner, ctx.lab.labId, "viewer", "target")).id;

// A small two-plane 16-bit TIFF written by our own writer (its correctness is checked in tests/tiff/writer.test.ts).
let tiff: Uint8Array;
const D = (id: number) => `/api/datasets/${id}`;
const freshDataset = async (ctx: Ctx) => (await uploadFile(ctx.lab.editor, ctx.lab.labId, tiff, { fileName: "matrix.tif", dimensions: { sizeC: 1, sizeZ: 1, sizeT: 2, order: "XYCZT" } })).body.datasetId as number;
const binnedDataset = async (ctx: Ctx) => {
  const id = await freshDataset(ctx);
  await ctx.lab.editor.delete(D(id));
  return id;
};
// Uploads belong to the person who started them: actors who may upload act on their own, the others
// on the editor's (which they must not reach either way).
const uploader = (ctx: Ctx) => (ctx.who === "editor" || ctx.who === "owner" ? ctx.client : ctx.lab.editor);
const freshUpload = async (ctx: Ctx) => startUpload(uploader(ctx), ctx.lab.labId, tiff, { fileName: "matrix.tif", partSize: 1024, dimensions: { sizeC: 1, sizeZ: 1, sizeT: 2, order: "XYCZT" } });
const U = (ctx: Ctx, id: string) => `${L(ctx)}/uploads/${id}`;

// Presets: every mutating cell gets its own lab preset, made by the owner under a fresh name.
const presetBody = (scope: "private" | "lab") => ({
  name: `Matrix ${scope} ${Math.random().toString(36).slice(2, 10)}`,
  scope,
  blend: "add",
  channels: [{ match: { index: 0 }, visible: true, colour: "#00ff00", tableId: null, gamma: 1, range: { mode: "counts", black: 10, white: 4000 } }],
});
const labPreset = async (ctx: Ctx) => {
  const reply = await ctx.lab.owner.post(`${L(ctx)}/presets`, presetBody("lab"));
  if (reply.status !== 201) throw new Error(`lab preset: ${reply.status} ${JSON.stringify(reply.body)}`);
  return reply.body.preset.id as number;
};
const P = (ctx: Ctx, id: number) => `${L(ctx)}/presets/${id}`;
/** A one-preset file (lib/schemas/preset-file.ts) under a fresh name, so no cell clashes with another. */
const presetFile = () => JSON.stringify({ format: "fluxframe-presets", version: 1, presets: [presetBody("lab")] }, null, 2);
const viewBody = { z: 0, t: 1, blend: "add", channels: [{ c: 0, visible: true, colour: "#00ff00", tableId: null, gamma: 1, black: 10, white: 4000 }] };
const isMember = (who: Actor) => who === "viewer" || who === "editor" || who === "owner";
// Colour tables: every mutating cell gets its own lab table, made by the owner under a fresh name.
const colourTableBody = (scope: "private" | "lab" | "public") => ({
  name: `Matrix table ${Math.random().toString(36).slice(2, 10)}`,
  scope,
  space: "oklab",
  stops: [{ position: 0, colour: "#000000" }, { position: 1, colour: "#ffffff" }],
});
const labColourTable = async (ctx: Ctx) => {
  const reply = await ctx.lab.owner.post(`${L(ctx)}/colour-tables`, colourTableBody("lab"));
  if (reply.status !== 201) throw new Error(`lab colour table: ${reply.status} ${JSON.stringify(reply.body)}`);
  return reply.body.table.id as number;
};
const CT = (ctx: Ctx, id: number) => `${L(ctx)}/colour-tables/${id}`;
const greyCsv = "index,r,g,b\n" + Array.from({ length: 256 }, (_, i) => `${i},${i},${i},${i}\n`).join("");
// Detector profiles: every mutating cell gets its own profile, typed in by the owner under a fresh name.
const detectorBody = () => ({ name: `Matrix camera ${Math.random().toString(36).slice(2, 10)}`, bitDepth: 12, offsetDn: 100, gain: { value: 2, unit: "e_per_dn" } });
const ownerDetector = async (ctx: Ctx) => {
  const reply = await ctx.lab.owner.post(`${L(ctx)}/detector-profiles`, detectorBody());
  if (reply.status !== 201) throw new Error(`detector profile: ${reply.status} ${JSON.stringify(reply.body)}`);
  return reply.body.profile.id as number;
};
const DP = (ctx: Ctx, id: number) => `${L(ctx)}/detector-profiles/${id}`;
// One small photon-transfer series (dark pair + flat pairs), uploaded once when a cell first needs it.
let seriesId: Promise<number> | null = null;
const seriesDataset = (ctx: Ctx) =>
  (seriesId ??= (async () => {
    const series = await photonTransferTiff({ side: 48 });
    const id = (await uploadFile(ctx.lab.editor, ctx.lab.labId, series.bytes, { fileName: "matrix-series.tif", dimensions: series.dimensions })).body.datasetId as number;
    expect((await waitForIngest(ctx.lab.editor, id)).dataset.status).toBe("ready");
    return id;
  })());
// A fresh lab-members view link made by the owner (with download allowed when asked for).
const ownerLink = async (ctx: Ctx, allowDownload = false, access: "lab" | "anyone" = "lab") => {
  const reply = await ctx.lab.owner.post(`${D(ctx.datasetId)}/links`, { state: viewBody, access, allowDownload });
  if (reply.status !== 201) throw new Error(`link: ${reply.status} ${JSON.stringify(reply.body)}`);
  return { id: reply.body.link.id as number, token: reply.body.token as string };
};
/**
 * The token each actor holds for the link routes: members and others a lab-members link; the link
 * guest an "anyone" link; the revoked-link guest an "anyone" link the owner has revoked.
 */
const linkToken = async (ctx: Ctx) => {
  if (ctx.who !== "link guest" && ctx.who !== "revoked-link guest") return (await ownerLink(ctx, true)).token;
  const link = await ownerLink(ctx, true, "anyone");
  if (ctx.who === "revoked-link guest") {
    const revoked = await ctx.lab.owner.delete(`${D(ctx.datasetId)}/links/${link.id}`);
    if (revoked.status !== 200) throw new Error(`revoke: ${revoked.status}`);
  }
  return link.token;
};
// Regions: a fresh rectangle drawn by the owner for each mutating cell.
const ownerRegion = async (ctx: Ctx) => {
  const reply = await ctx.lab.owner.post(`${D(ctx.datasetId)}/regions`, { name: "Matrix region", kind: "rect", geometry: { x: 0, y: 0, width: 2, height: 2 } });
  if (reply.status !== 201) throw new Error(`region: ${reply.status} ${JSON.stringify(reply.body)}`);
  return reply.body.region.id as number;
};
const ownerSavedView = async (ctx: Ctx) => {
  const reply = await ctx.lab.owner.post(`${D(ctx.datasetId)}/saved-views`, { name: `Owner view ${Math.random().toString(36).slice(2, 10)}`, state: viewBody });
  if (reply.status !== 201) throw new Error(`saved view: ${reply.status} ${JSON.stringify(reply.body)}`);
  return reply.body.view.id as number;
};

// Public routes answer the same to everyone. Lab routes: anonymous 401, a member whose role lacks the
// action 403, a member of another lab 404 (as if the lab did not exist). Mutating cells get fresh
// targets so no cell depends on another one's outcome.
//                                                                    anon viewer editor owner outsider
const table: [method: string, route: string, statuses: Statuses, target: Target][] = [
  ["GET",    "/api/health",                                         [200, 200, 200, 200, 200], async () => ({ path: "/api/health" })],
  // The test environment sets OUTBOX_OPEN=1 so the browser tests can read mail; production keeps it closed.
  ["GET",    "/api/dev/outbox",                                     [200, 200, 200, 200, 200], async () => ({ path: "/api/dev/outbox" })],
  ["POST",   "/api/account/signup",                                 [201, 201, 201, 201, 201],
    async () => ({ path: "/api/account/signup", body: { name: "Matrix Person", email: uniqueEmail("matrix"), password: "a-long-enough-password" } })],
  ["POST",   "/api/account/password/forgot",                        [202, 202, 202, 202, 202],
    async () => ({ path: "/api/account/password/forgot", body: { email: uniqueEmail("nobody") } })],
  ["POST",   "/api/account/password/reset",                         [200, 200, 200, 200, 200],
    async () => {
      const person = await newUser("resetter");
      return { path: "/api/account/password/reset", body: { token: await resetToken(person.email), password: "a-brand-new-password" } };
    }],
  ["GET",    "/api/me",                                             [401, 200, 200, 200, 200], async () => ({ path: "/api/me" })],
  ["GET",    "/api/labs",                                           [401, 200, 200, 200, 200], async () => ({ path: "/api/labs" })],
  ["POST",   "/api/labs",                                           [401, 201, 201, 201, 201], async () => ({ path: "/api/labs", body: { name: "Matrix lab" } })],
  ["GET",    "/api/invitations/[token]",                            [200, 200, 200, 200, 200], async (c) => ({ path: `/api/invitations/${c.previewToken}` })],
  ["POST",   "/api/invitations/[token]/accept",                     [401, 200, 200, 200, 200],
    async (c) => {
      const email = c.client.email || uniqueEmail("nobody"); // callers without an account: any address
      const { token } = await invite(c.host.owner, c.host.labId, email, "viewer");
      return { path: `/api/invitations/${token}/accept`, body: {} };
    }],
  ["GET",    "/api/labs/[labId]",                                   [401, 200, 200, 200, 404], async (c) => ({ path: L(c) })],
  ["PATCH",  "/api/labs/[labId]",                                   [401, 403, 403, 200, 404], async (c) => ({ path: L(c), body: { name: `Renamed by ${c.who}` } })],
  ["GET",    "/api/labs/[labId]/audit",                             [401, 403, 403, 200, 404], async (c) => ({ path: `${L(c)}/audit` })],
  ["GET",    "/api/labs/[labId]/members",                           [401, 200, 200, 200, 404], async (c) => ({ path: `${L(c)}/members` })],
  ["PATCH",  "/api/labs/[labId]/members/[userId]",                  [401, 403, 403, 200, 404],
    async (c) => ({ path: `${L(c)}/members/${await freshMember(c)}`, body: { role: "editor" } })],
  ["DELETE", "/api/labs/[labId]/members/[userId]",                  [401, 403, 403, 204, 404], async (c) => ({ path: `${L(c)}/members/${await freshMember(c)}` })],
  ["GET",    "/api/labs/[labId]/invitations",                       [401, 403, 403, 200, 404], async (c) => ({ path: `${L(c)}/invitations` })],
  ["POST",   "/api/labs/[labId]/invitations",                       [401, 403, 403, 201, 404],
    async (c) => ({ path: `${L(c)}/invitations`, body: { email: uniqueEmail("invitee"), role: "viewer" } })],
  ["DELETE", "/api/labs/[labId]/invitations/[invitationId]",        [401, 403, 403, 204, 404],
    async (c) => ({ path: `${L(c)}/invitations/${(await invite(c.lab.owner, c.lab.labId, uniqueEmail("invitee"), "viewer")).id}` })],
  ["GET",    "/api/labs/[labId]/datasets",                          [401, 200, 200, 200, 404], async (c) => ({ path: `${L(c)}/datasets` })],
  ["GET",    "/api/labs/[labId]/datasets/compression",              [401, 200, 200, 200, 404], async (c) => ({ path: `${L(c)}/datasets/compression` })],
  ["POST",   "/api/labs/[labId]/uploads",                           [401, 403, 201, 201, 404],
    async (c) => ({ path: `${L(c)}/uploads`, body: { fileName: "matrix.tif", sizeBytes: tiff.length } })],
  ["GET",    "/api/labs/[labId]/uploads/[uploadId]",                [401, 403, 200, 200, 404], async (c) => ({ path: U(c, (await freshUpload(c)).id) })],
  ["DELETE", "/api/labs/[labId]/uploads/[uploadId]",                [401, 403, 204, 204, 404], async (c) => ({ path: U(c, (await freshUpload(c)).id) })],
  ["PUT",    "/api/labs/[labId]/uploads/[uploadId]/parts/[partNumber]", [401, 403, 200, 200, 404],
    async (c) => ({ path: `${U(c, (await freshUpload(c)).id)}/parts/1`, raw: tiff.subarray(0, 1024) })],
  ["POST",   "/api/labs/[labId]/uploads/[uploadId]/complete",       [401, 403, 201, 201, 404],
    async (c) => {
      const upload = await freshUpload(c);
      for (let n = 1; n <= upload.partCount; n++) await putPart(uploader(c), c.lab.labId, upload.id, n, tiff.subarray((n - 1) * 1024, n * 1024));
      return { path: `${U(c, upload.id)}/complete`, body: { sha256: sha256(tiff) } };
    }],
  ["GET",    "/api/datasets/[datasetId]",                           [401, 200, 200, 200, 404], async (c) => ({ path: D(c.datasetId) })],
  ["PATCH",  "/api/datasets/[datasetId]",                           [401, 403, 200, 200, 404], async (c) => ({ path: D(c.datasetId), body: { notes: `Edited by ${c.who}` } })],
  ["DELETE", "/api/datasets/[datasetId]",                           [401, 403, 200, 200, 404], async (c) => ({ path: D(await freshDataset(c)) })],
  ["POST",   "/api/datasets/[datasetId]/restore",                   [401, 403, 200, 200, 404], async (c) => ({ path: `${D(await binnedDataset(c))}/restore`, body: {} })],
  ["GET",    "/api/datasets/[datasetId]/file",                      [401, 200, 200, 200, 404], async (c) => ({ path: `${D(c.datasetId)}/file` })],
  ["GET",    "/api/datasets/[datasetId]/planes",                    [401, 200, 200, 200, 404], async (c) => ({ path: `${D(c.datasetId)}/planes` })],
  ["GET",    "/api/datasets/[datasetId]/thumbnail",                 [401, 200, 200, 200, 404], async (c) => ({ path: `${D(c.datasetId)}/thumbnail` })],
  ["POST",   "/api/datasets/[datasetId]/verify",                    [401, 200, 200, 200, 404], async (c) => ({ path: `${D(c.datasetId)}/verify`, body: {} })],
  ["GET",    "/api/labs/[labId]/presets",                           [401, 200, 200, 200, 404], async (c) => ({ path: `${L(c)}/presets` })],
  // Creating a lab preset needs presets.edit; private presets (any member) are covered in presets.test.ts.
  ["POST",   "/api/labs/[labId]/presets",                           [401, 403, 201, 201, 404], async (c) => ({ path: `${L(c)}/presets`, body: presetBody("lab") })],
  ["GET",    "/api/labs/[labId]/presets/[presetId]",                [401, 200, 200, 200, 404], async (c) => ({ path: P(c, await labPreset(c)) })],
  ["PATCH",  "/api/labs/[labId]/presets/[presetId]",                [401, 403, 200, 200, 404],
    async (c) => ({ path: P(c, await labPreset(c)), body: { version: 1, name: `Renamed by ${c.who} ${Math.random().toString(36).slice(2, 8)}` } })],
  ["DELETE", "/api/labs/[labId]/presets/[presetId]",                [401, 403, 204, 204, 404], async (c) => ({ path: P(c, await labPreset(c)) })],
  ["POST",   "/api/labs/[labId]/presets/[presetId]/duplicate",      [401, 201, 201, 201, 404], async (c) => ({ path: `${P(c, await labPreset(c))}/duplicate`, body: {} })],
  ["GET",    "/api/labs/[labId]/presets/export",                    [401, 200, 200, 200, 404], async (c) => ({ path: `${L(c)}/presets/export` })],
  // Importing into the lab needs presets.edit; into one's private presets (any member) is in presets-import.test.ts.
  ["POST",   "/api/labs/[labId]/presets/import",                    [401, 403, 201, 201, 404],
    async (c) => ({ path: `${L(c)}/presets/import`, body: { scope: "lab", text: presetFile() } })],
  ["GET",    "/api/labs/[labId]/colour-tables",                     [401, 200, 200, 200, 404], async (c) => ({ path: `${L(c)}/colour-tables` })],
  // Lab tables need presets.edit; private ones (any member) and public ones are covered in colour-tables.test.ts.
  ["POST",   "/api/labs/[labId]/colour-tables",                     [401, 403, 201, 201, 404], async (c) => ({ path: `${L(c)}/colour-tables`, body: colourTableBody("lab") })],
  ["POST",   "/api/labs/[labId]/colour-tables/import",              [401, 403, 201, 201, 404],
    async (c) => ({ path: `${L(c)}/colour-tables/import`, body: { format: "csv", content: greyCsv, name: colourTableBody("lab").name, scope: "lab" } })],
  ["GET",    "/api/labs/[labId]/colour-tables/[colourTableId]",     [401, 200, 200, 200, 404], async (c) => ({ path: CT(c, await labColourTable(c)) })],
  ["PATCH",  "/api/labs/[labId]/colour-tables/[colourTableId]",     [401, 403, 200, 200, 404],
    async (c) => ({ path: CT(c, await labColourTable(c)), body: { version: 1, name: colourTableBody("lab").name } })],
  ["DELETE", "/api/labs/[labId]/colour-tables/[colourTableId]",     [401, 403, 204, 204, 404], async (c) => ({ path: CT(c, await labColourTable(c)) })],
  ["GET",    "/api/labs/[labId]/colour-tables/[colourTableId]/export", [401, 200, 200, 200, 404], async (c) => ({ path: `${CT(c, await labColourTable(c))}/export?format=csv` })],
  // Detector profiles: members read them; editors and owners keep them (detectors.edit).
  ["GET",    "/api/labs/[labId]/detector-profiles",                 [401, 200, 200, 200, 404], async (c) => ({ path: `${L(c)}/detector-profiles` })],
  ["POST",   "/api/labs/[labId]/detector-profiles",                 [401, 403, 201, 201, 404], async (c) => ({ path: `${L(c)}/detector-profiles`, body: detectorBody() })],
  ["GET",    "/api/labs/[labId]/detector-profiles/[profileId]",     [401, 200, 200, 200, 404], async (c) => ({ path: DP(c, await ownerDetector(c)) })],
  ["PATCH",  "/api/labs/[labId]/detector-profiles/[profileId]",     [401, 403, 200, 200, 404],
    async (c) => ({ path: DP(c, await ownerDetector(c)), body: { version: 1, notes: `Edited by ${c.who}` } })],
  ["DELETE", "/api/labs/[labId]/detector-profiles/[profileId]",     [401, 403, 204, 204, 404], async (c) => ({ path: DP(c, await ownerDetector(c)) })],
  // The fit is computed and returned, nothing saved: any member may look.
  ["POST",   "/api/datasets/[datasetId]/photon-transfer",           [401, 200, 200, 200, 404], async (c) => ({ path: `${D(await seriesDataset(c))}/photon-transfer`, body: {} })],
  // Members read the view they saved themselves; nobody else can save one for them.
  ["GET",    "/api/datasets/[datasetId]/view",                      [401, 200, 200, 200, 404],
    async (c) => {
      if (isMember(c.who)) {
        const saved = await c.client.request("PUT", `${D(c.datasetId)}/view`, viewBody);
        if (saved.status !== 200) throw new Error(`save view: ${saved.status} ${JSON.stringify(saved.body)}`);
      }
      return { path: `${D(c.datasetId)}/view` };
    }],
  ["PUT",    "/api/datasets/[datasetId]/view",                      [401, 200, 200, 200, 404], async (c) => ({ path: `${D(c.datasetId)}/view`, body: viewBody })],
  // View links: editors and owners make them; every member sees the list and the previews.
  ["GET",    "/api/datasets/[datasetId]/links",                     [401, 200, 200, 200, 404], async (c) => ({ path: `${D(c.datasetId)}/links` })],
  ["POST",   "/api/datasets/[datasetId]/links",                     [401, 403, 201, 201, 404],
    async (c) => ({ path: `${D(c.datasetId)}/links`, body: { state: viewBody, access: "lab" } })],
  ["DELETE", "/api/datasets/[datasetId]/links/[linkId]",            [401, 403, 200, 200, 404],
    async (c) => ({ path: `${D(c.datasetId)}/links/${(await ownerLink(c)).id}` })],
  ["GET",    "/api/datasets/[datasetId]/links/[linkId]/preview",    [401, 200, 200, 200, 404],
    async (c) => ({ path: `${D(c.datasetId)}/links/${(await ownerLink(c)).id}/preview` })],
  // Acquisition checks: every member reads them; only the owner sets the limits.
  ["GET",    "/api/datasets/[datasetId]/check",                     [401, 200, 200, 200, 404], async (c) => ({ path: `${D(c.datasetId)}/check` })],
  ["GET",    "/api/labs/[labId]/checks",                            [401, 200, 200, 200, 404], async (c) => ({ path: `${L(c)}/checks` })],
  ["PUT",    "/api/labs/[labId]/check-thresholds",                  [401, 403, 403, 200, 404],
    async (c) => ({ path: `${L(c)}/check-thresholds`, body: { saturatedCaution: 0, saturatedReimage: 0.001, planeSaturatedReimage: 0.01, zeroCaution: 0.001, zeroReimage: 0.05, rangeUseCaution: 0.1 } })],
  // Saved views: any member names one; the maker, editors and owners delete it.
  ["GET",    "/api/datasets/[datasetId]/saved-views",               [401, 200, 200, 200, 404], async (c) => ({ path: `${D(c.datasetId)}/saved-views` })],
  ["POST",   "/api/datasets/[datasetId]/saved-views",               [401, 201, 201, 201, 404],
    async (c) => ({ path: `${D(c.datasetId)}/saved-views`, body: { name: `Matrix view ${Math.random().toString(36).slice(2, 10)}`, state: viewBody } })],
  ["DELETE", "/api/datasets/[datasetId]/saved-views/[viewId]",      [401, 403, 204, 204, 404],
    async (c) => ({ path: `${D(c.datasetId)}/saved-views/${await ownerSavedView(c)}` })],
  // Regions: the lab sees them; editors and owners draw, change and delete them (datasets.edit).
  ["GET",    "/api/datasets/[datasetId]/regions",                   [401, 200, 200, 200, 404], async (c) => ({ path: `${D(c.datasetId)}/regions` })],
  ["POST",   "/api/datasets/[datasetId]/regions",                   [401, 403, 201, 201, 404],
    async (c) => ({ path: `${D(c.datasetId)}/regions`, body: { name: "Matrix rect", kind: "rect", geometry: { x: 1, y: 1, width: 3, height: 3 } } })],
  ["PATCH",  "/api/datasets/[datasetId]/regions/[regionId]",        [401, 403, 200, 200, 404],
    async (c) => ({ path: `${D(c.datasetId)}/regions/${await ownerRegion(c)}`, body: { version: 1, name: `Renamed by ${c.who}` } })],
  ["DELETE", "/api/datasets/[datasetId]/regions/[regionId]",        [401, 403, 204, 204, 404],
    async (c) => ({ path: `${D(c.datasetId)}/regions/${await ownerRegion(c)}` })],
  // Opening a lab-members link: the token is the credential, but only lab members get through; a
  // signed-in member of another lab is told the link is not for them (403), not that it is missing.
  ["GET",    "/api/v/[token]",                                      [401, 200, 200, 200, 403], async (c) => ({ path: `/api/v/${await linkToken(c)}` })],
  ["GET",    "/api/v/[token]/status",                               [401, 200, 200, 200, 403], async (c) => ({ path: `/api/v/${await linkToken(c)}/status` })],
  ["GET",    "/api/v/[token]/planes",                               [401, 200, 200, 200, 403], async (c) => ({ path: `/api/v/${await linkToken(c)}/planes` })],
  ["GET",    "/api/v/[token]/file",                                 [401, 200, 200, 200, 403], async (c) => ({ path: `/api/v/${await linkToken(c)}/file` })],
  ["GET",    "/api/v/[token]/preview",                              [401, 200, 200, 200, 403], async (c) => ({ path: `/api/v/${await linkToken(c)}/preview` })],
];

/** Every "METHOD /api/…" that a route.ts under app/api exports, except next-auth's own handler. */
function routeHandlers(): string[] {
  const apiDir = join(import.meta.dirname, "..", "..", "app", "api");
  const found: string[] = [];
  const walk = (dir: string) => {
    for (const entry of readdirSync(dir, { withFileTypes: true })) {
      const path = join(dir, entry.name);
      if (entry.isDirectory()) walk(path);
      else if (/^route\.(ts|tsx|js)$/.test(entry.name)) {
        const route = "/api/" + relative(apiDir, dir).split(sep).join("/");
        if (route.includes("[...nextauth]")) continue;
        const source = readFileSync(path, "utf8");
        const methods = new Set<string>();
        for (const m of source.matchAll(/export\s+(?:const|async\s+function|function)\s+(GET|HEAD|POST|PUT|PATCH|DELETE|OPTIONS)\b/g)) methods.add(m[1]);
        for (const m of source.matchAll(/export\s*\{([^}]*)\}/g)) {
          for (const name of m[1].matchAll(/\bas\s+(GET|HEAD|POST|PUT|PATCH|DELETE|OPTIONS)\b/g)) methods.add(name[1]);
        }
        if (methods.size === 0) throw new Error(`${path} exports no HTTP method this test recognises`);
        for (const method of methods) found.push(`${method} ${route.replace(/\/$/, "")}`);
      }
    }
  };
  walk(apiDir);
  return found.sort();
}

describe("access matrix", () => {
  let lab: LabWithMembers;
  let host: Ctx["host"];
  let previewToken: string;
  let datasetId: number;
  const clients = {} as Record<Actor, Client>;

  beforeAll(async () => {
    lab = await labWithMembers();
    Object.assign(clients, { anonymous: anonymous(), viewer: lab.viewer, editor: lab.editor, owner: lab.owner, outsider: lab.outsider, "link guest": anonymous(), "revoked-link guest": anonymous() });
    const hostOwner = await newUser("host");
    host = { owner: hostOwner, labId: (await hostOwner.post("/api/labs", { name: "Host lab" })).body.lab.id };
    previewToken = (await invite(lab.owner, lab.labId, uniqueEmail("preview"), "viewer")).token;
    const plane = (k: number) => Uint16Array.from({ length: 32 * 24 }, (_, i) => (i * 7 + k * 13) % 4096);
    tiff = await writeTiff([plane(0), plane(1)], { width: 32, height: 24, bitsPerSample: 16 });
    datasetId = (await uploadFile(lab.editor, lab.labId, tiff, { fileName: "matrix.tif", dimensions: { sizeC: 1, sizeZ: 1, sizeT: 2, order: "XYCZT" } })).body.datasetId;
    expect((await waitForIngest(lab.editor, datasetId)).dataset.status).toBe("ready");
  });
  afterAll(closeDb);

  it("has exactly one row for every route handler under app/api", () => {
    const rows = table.map(([method, route]) => `${method} ${route}`).sort();
    expect(new Set(rows).size, "duplicate rows in the table").toBe(rows.length);
    expect(rows).toEqual(routeHandlers());
  });

  const cells = table.flatMap(([method, route, statuses, target]) => {
    const all = [...statuses, ...guestStatuses(route, statuses)];
    return actors.map((who, i) => ({ method, route, who, status: all[i], target }));
  });

  it.each(cells)("$method $route as $who → $status", async ({ method, route, who, status, target }) => {
    const client = clients[who];
    const { path, body, raw } = await target({ lab, who, client, host, previewToken, datasetId });
    // Routes that change the lab itself, its members or invitations: their effect shows in the snapshot.
    const labScoped = /^\/api\/labs\/\[labId\](\/members|\/invitations|$)/.test(route);
    const before = labScoped ? await labSnapshot(lab.labId) : null;
    const reply = raw
      ? await client.raw(method, path, { body: raw, headers: { "content-type": "application/octet-stream" } })
      : await client.request(method, path, body);
    expect(reply.status, JSON.stringify(reply.body)).toBe(status);
    if (status >= 400) expectErrorShape(reply.body);
    if (labScoped && method !== "GET") {
      const after = await labSnapshot(lab.labId);
      // A refused change leaves the lab as it was; an allowed one really changed it.
      if (status >= 400) expect(after).toBe(before);
      else expect(after).not.toBe(before);
    }
  });

  const labRows = table.filter(([, route]) => route.startsWith("/api/labs/[labId]") || route.startsWith("/api/datasets/[datasetId]"));
  it.each(labRows.map(([method, route, , target]) => ({ method, route, target })))(
    "$method $route answers a member of another lab exactly as if the lab or dataset did not exist",
    async ({ method, target }) => {
      const { path, body, raw } = await target({ lab, who: "outsider", client: lab.outsider, host, previewToken, datasetId });
      const send = (p: string) =>
        raw ? lab.outsider.raw(method, p, { body: raw, headers: { "content-type": "application/octet-stream" } }) : lab.outsider.request(method, p, body);
      const existing = await send(path);
      const missing = await send(path.replace(`/api/labs/${lab.labId}`, "/api/labs/4294967295").replace(/\/api\/datasets\/\d+/, "/api/datasets/4294967295"));
      expect(existing.status).toBe(404);
      expect({ status: missing.status, body: missing.body }).toEqual({ status: existing.status, body: existing.body });
    },
  );
});
