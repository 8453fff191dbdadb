// Property-based hostile input on every route (fast-check): for each route handler under app/api
// (found from the folder tree, as the access matrix does), random and mutated JSON bodies, raw
// garbage and random query strings sent by a signed-in lab owner with real ids in the path. The
// server must never fail (no 5xx), never hang (each request has a deadline), and every refusal must
// have the one documented error shape.
import { readdirSync, readFileSync } from "node:fs";
import { join, relative, sep } from "node:path";
import fc from "fast-check";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { closeDb } from "@/lib/server/db";
import { writeTiff } from "@/lib/tiff/writer";
import { expectErrorShape } from "../helpers/errors";
import { invite, labWithMembers, uniqueEmail, type LabWithMembers } from "../helpers/http";
import { startUpload, uploadFile, waitForIngest } from "../helpers/uploads";

afterAll(closeDb);

/** Every [method, route] under app/api, except next-auth's own handler. */
function routeHandlers(): [string, string][] {
  const apiDir = join(import.meta.dirname, "..", "..", "app", "api");
  const found: [string, string][] = [];
  const walk = (dir: string) => {
    for (const entry of readdirSync(dir, { withFileTypes: true })) {
      const path = join(dir, entry.name);
      if (entry.isDirectory()) walk(path);
      else if (entry.name === "route.ts") {
        const route = "/api/" + relative(apiDir, dir).split(sep).join("/");
        if (route.includes("[...nextauth]")) continue;
        const source = readFileSync(path, "utf8");
        for (const m of source.matchAll(/export\s+(?:const|async\s+function|function)\s+(GET|POST|PUT|PATCH|DELETE)\b/g)) found.push([m[1], route]);
        for (const m of source.matchAll(/\bas\s+(GET|POST|PUT|PATCH|DELETE)\b/g)) found.push([m[1], route]);
      }
    }
  };
  walk(apiDir);
  return found;
}

let lab: LabWithMembers;
const params: Record<string, string> = {};

beforeAll(async () => {
  lab = await labWithMembers();
  const o = lab.owner;
  const L = `/api/labs/${lab.labId}`;
  const tiff = await writeTiff([Uint16Array.from({ length: 16 * 12 }, (_, i) => i % 4096), Uint16Array.from({ length: 16 * 12 }, (_, i) => (i * 3) % 4096)], { width: 16, height: 12, bitsPerSample: 16 });
  const datasetId = (await uploadFile(lab.editor, lab.labId, tiff, { fileName: "hostile.tif", dimensions: { sizeC: 1, sizeZ: 1, sizeT: 2, order: "XYCZT" } })).body.datasetId;
  await waitForIngest(lab.editor, datasetId);
  const D = `/api/datasets/${datasetId}`;
  const view = { z: 0, t: 0, blend: "add", channels: [{ c: 0, visible: true, colour: "#00ff00", tableId: null, gamma: 1, black: 0, white: 4000 }] };
  const made = async (path: string, body: unknown, pick: (b: any) => unknown) => {
    const reply = await o.post(path, body);
    if (reply.status !== 201) throw new Error(`${path}: ${reply.status} ${JSON.stringify(reply.body)}`);
    return String(pick(reply.body));
  };
  const link = await o.post(`${D}/links`, { state: view, access: "anyone", allowDownload: true });
  const invitation = await invite(o, lab.labId, uniqueEmail("hostile"), "viewer");
  Object.assign(params, {
    labId: String(lab.labId),
    datasetId: String(datasetId),
    presetId: await made(`${L}/presets`, { name: "Hostile", scope: "lab", blend: "add", channels: [{ match: { index: 0 }, visible: true, colour: "#00ff00", tableId: null, gamma: 1, range: { mode: "counts", black: 0, white: 100 } }] }, (b) => b.preset.id),
    colourTableId: await made(`${L}/colour-tables`, { name: "Hostile table", scope: "lab", space: "oklab", stops: [{ position: 0, colour: "#000000" }, { position: 1, colour: "#ffffff" }] }, (b) => b.table.id),
    profileId: await made(`${L}/detector-profiles`, { name: "Hostile cam", bitDepth: 12, offsetDn: 100, gain: { value: 0.5, unit: "dn_per_e" }, readNoiseE: 2, saturationCapacityE: 8000 }, (b) => b.profile.id),
    regionId: await made(`${D}/regions`, { name: "Hostile region", kind: "rect", geometry: { x: 0, y: 0, width: 2, height: 2 } }, (b) => b.region.id),
    viewId: await made(`${D}/saved-views`, { name: "Hostile view", state: view }, (b) => b.view.id),
    linkId: String(link.body.link.id),
    uploadId: (await startUpload(o, lab.labId, tiff, { fileName: "pending.tif", partSize: 1024 })).id,
    invitationId: String(invitation.id),
    userId: String(lab.viewer.id),
    partNumber: "1",
  });
  params.token = link.body.token;
  params.invitationToken = invitation.token;
}, 120_000);

function pathOf(route: string): string {
  return route.replace(/\[(\w+)\]/g, (_, name: string) => {
    if (name === "token") return route.startsWith("/api/invitations") ? params.invitationToken : params.token;
    const value = params[name];
    if (value === undefined) throw new Error(`no value for ${name} in ${route}`);
    return value;
  });
}

// Anything a client could send: JSON values of every kind, objects with the routes' own field names
// filled with the wrong kinds of value, and text that is not JSON at all.
const fieldNames = ["name", "scope", "blend", "channels", "state", "access", "emails", "expiresInDays", "version", "email", "password", "token", "role", "sizeBytes", "partSize", "fileName", "sha256", "text", "onClash", "stops", "space", "gain", "bitDepth", "geometry", "kind", "z", "t", "c", "detectorProfileId", "title"];
const hostileJson = fc.oneof(
  fc.jsonValue({ maxDepth: 3 }),
  fc.dictionary(fc.constantFrom(...fieldNames), fc.jsonValue({ maxDepth: 2 }), { maxKeys: 6 }),
);
const hostileText = fc.oneof(fc.string({ maxLength: 200 }), fc.constantFrom("{", "[1,2", '{"name":', "\u0000\u0001", "null", "1e999", '{"__proto__":{"admin":true}}'));

async function send(method: string, path: string, body: string | undefined, contentType: string) {
  const reply = await lab.owner.raw(method, path, { body, headers: { "content-type": contentType } });
  expect(reply.status, `${method} ${path} with ${String(body).slice(0, 200)} → ${JSON.stringify(reply.body).slice(0, 300)}`).toBeLessThan(500);
  if (reply.status >= 400) expectErrorShape(reply.body);
}

const routes = routeHandlers();
const writes = routes.filter(([method]) => method === "POST" || method === "PUT" || method === "PATCH");
const reads = routes.filter(([method]) => method === "GET");

describe("hostile input", () => {
  it("finds the routes", () => {
    expect(writes.length).toBeGreaterThan(25);
    expect(reads.length).toBeGreaterThan(25);
  });

  it.each(writes)("%s %s: random JSON bodies and non-JSON text never give a 5xx, refusals have the error shape", async (method, route) => {
    const path = pathOf(route);
    await fc.assert(fc.asyncProperty(hostileJson, (value) => send(method, path, JSON.stringify(value), "application/json")), { numRuns: 15 });
    await fc.assert(fc.asyncProperty(hostileText, (text) => send(method, path, text, "application/json")), { numRuns: 8 });
  }, 120_000);

  it.each(reads)("%s %s: random query strings never give a 5xx", async (method, route) => {
    const path = pathOf(route);
    const query = fc.dictionary(fc.constantFrom("q", "status", "page", "pageSize", "sort", "dir", "action", "limit", "ids", "format", "bin", "tag", "experiment", "c"), fc.string({ maxLength: 30 }), { maxKeys: 4 });
    await fc.assert(
      fc.asyncProperty(query, async (q) => {
        const reply = await lab.owner.raw(method, `${path}?${new URLSearchParams(q)}`);
        expect(reply.status, `${path}?${new URLSearchParams(q)} → ${JSON.stringify(reply.body).slice(0, 300)}`).toBeLessThan(500);
        if (reply.status >= 400 && typeof reply.body === "object" && reply.body) expectErrorShape(reply.body);
      }),
      { numRuns: 10 },
    );
  }, 120_000);
});
