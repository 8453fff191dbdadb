// Bad input to every route that takes input: a clear 4xx with the one error shape, never a 500, and
// nothing changed in the database.
import { Op } from "sequelize";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { closeDb } from "@/lib/server/db";
import { db, labSnapshot } from "../helpers/db";
import { expectError } from "../helpers/errors";
import { anonymous, Client, invite, labWithMembers, uniqueEmail, type LabWithMembers } from "../helpers/http";

let lab: LabWithMembers;
let invitationId: number;

beforeAll(async () => {
  lab = await labWithMembers();
  invitationId = (await invite(lab.owner, lab.labId, uniqueEmail("pending"), "viewer")).id;
});
afterAll(closeDb);

/** The lab's rows, the labs the owner created and every account this file tried to create. */
async function state(): Promise<string> {
  const labs = await db().Lab.count({ where: { createdById: lab.owner.id } });
  const users = await db().User.count({ where: { email: { [Op.like]: "badinput-%" } } });
  return JSON.stringify([await labSnapshot(lab.labId), labs, users]);
}

async function expectUnchanged(action: () => Promise<void>): Promise<void> {
  const before = await state();
  await action();
  expect(await state()).toBe(before);
}

interface BodyRoute {
  name: string;
  method: string;
  path: () => string;
  as: () => Client;
  valid: () => Record<string, unknown>;
}

const longEmail = `${"a".repeat(250)}@example.test`;
const bodyRoutes: BodyRoute[] = [
  { name: "sign-up", method: "POST", path: () => "/api/account/signup", as: anonymous,
    valid: () => ({ name: "Bad Input", email: uniqueEmail("badinput"), password: "long-enough-password" }) },
  { name: "forgotten password", method: "POST", path: () => "/api/account/password/forgot", as: anonymous,
    valid: () => ({ email: uniqueEmail("badinput") }) },
  { name: "password reset", method: "POST", path: () => "/api/account/password/reset", as: anonymous,
    valid: () => ({ token: "t".repeat(43), password: "long-enough-password" }) },
  { name: "create lab", method: "POST", path: () => "/api/labs", as: () => lab.owner, valid: () => ({ name: "A lab" }) },
  { name: "rename lab", method: "PATCH", path: () => `/api/labs/${lab.labId}`, as: () => lab.owner, valid: () => ({ name: "A lab" }) },
  { name: "change role", method: "PATCH", path: () => `/api/labs/${lab.labId}/members/${lab.viewer.id}`, as: () => lab.owner,
    valid: () => ({ role: "editor" }) },
  { name: "invite", method: "POST", path: () => `/api/labs/${lab.labId}/invitations`, as: () => lab.owner,
    valid: () => ({ email: uniqueEmail("badinput"), role: "viewer" }) },
];

// [route name, what, body override, field named in the answer]
const invalidFields: [string, string, Record<string, unknown>, string][] = [
  ["sign-up", "a number as name", { name: 7 }, "name"],
  ["sign-up", "an array as e-mail", { email: ["x@example.test"] }, "email"],
  ["sign-up", "a number as password", { password: 12345678901234 }, "password"],
  ["sign-up", "a null password", { password: null }, "password"],
  ["sign-up", "an over-long name", { name: "n".repeat(121) }, "name"],
  ["sign-up", "an over-long e-mail", { email: longEmail }, "email"],
  ["sign-up", "an over-long password", { password: "p".repeat(201) }, "password"],
  ["sign-up", "a one-megabyte name", { name: "n".repeat(1_000_000) }, "name"],
  ["forgotten password", "a number as e-mail", { email: 5 }, "email"],
  ["forgotten password", "an over-long e-mail", { email: longEmail }, "email"],
  ["password reset", "a number as token", { token: 5 }, "token"],
  ["password reset", "an over-long token", { token: "t".repeat(201) }, "token"],
  ["password reset", "an over-long password", { password: "p".repeat(201) }, "password"],
  ["create lab", "an object as name", { name: { first: "x" } }, "name"],
  ["create lab", "an over-long name", { name: "L".repeat(121) }, "name"],
  ["create lab", "a one-character name", { name: "L" }, "name"],
  ["rename lab", "a number as name", { name: 12 }, "name"],
  ["rename lab", "an over-long name", { name: "L".repeat(121) }, "name"],
  ["rename lab", "a blank name", { name: "     " }, "name"],
  ["change role", "an unknown role", { role: "admin" }, "role"],
  ["change role", "a role in upper case", { role: "OWNER" }, "role"],
  ["change role", "an over-long role", { role: "o".repeat(10_000) }, "role"],
  ["change role", "a number as role", { role: 3 }, "role"],
  ["invite", "an invalid e-mail", { email: "not-an-address" }, "email"],
  ["invite", "an over-long e-mail", { email: longEmail }, "email"],
  ["invite", "an unknown role", { role: "boss" }, "role"],
  ["invite", "a boolean as role", { role: true }, "role"],
];

const route = (name: string) => bodyRoutes.find((r) => r.name === name)!;

describe.each(bodyRoutes)("$name ($method)", (r) => {
  it.each([
    ["a cut-off object", '{"name": '],
    ["single quotes", "{'name': 'x'}"],
    ["a trailing comma", '{"name": "x",}'],
    ["plain text", "hello"],
    ["an empty body", ""],
  ])("answers 400 invalid_json for %s and changes nothing", async (_, text) => {
    await expectUnchanged(async () => {
      const reply = await r.as().raw(r.method, r.path(), { body: text, headers: { "content-type": "application/json" } });
      expectError(reply, 400, "invalid_json");
    });
  });

  it.each([
    ["null", null],
    ["an array", [r.valid()]],
    ["a string", "text"],
    ["a number", 42],
    ["an empty object", {}],
  ])("answers 400 invalid_input with fields for %s as the body and changes nothing", async (_, body) => {
    await expectUnchanged(async () => {
      const reply = await r.as().request(r.method, r.path(), body);
      expectError(reply, 400, "invalid_input");
      expect(Object.keys(reply.body.error.fields).length).toBeGreaterThan(0);
    });
  });
});

describe("wrong types and over-long strings", () => {
  it.each(invalidFields)("%s: answers 400 invalid_input on the field for %s and changes nothing", async (name, _, override, field) => {
    const r = route(name);
    await expectUnchanged(async () => {
      const reply = await r.as().request(r.method, r.path(), { ...r.valid(), ...override });
      expectError(reply, 400, "invalid_input");
      expect(Object.keys(reply.body.error.fields)).toContain(field);
    });
  });

  it.each([
    ["a limit that is not a number", "limit=abc"],
    ["a zero limit", "limit=0"],
    ["a limit above 500", "limit=501"],
    ["an over-long action filter", `action=${"a".repeat(65)}`],
  ])("audit: answers 400 invalid_input for %s", async (_, query) => {
    const reply = await lab.owner.get(`/api/labs/${lab.labId}/audit?${query}`);
    expectError(reply, 400, "invalid_input");
    expect(Object.keys(reply.body.error.fields).length).toBe(1);
  });
});

describe("unknown and malformed ids", () => {
  const ids = ["4294967295", "999999999", "0", "-1", "abc", "1e99", "1.5", "4294967296", "9".repeat(400), "null", "%20"];
  const labRoutes: [string, (id: string) => string, unknown?][] = [
    ["GET", (id) => `/api/labs/${id}`],
    ["PATCH", (id) => `/api/labs/${id}`, { name: "Renamed" }],
    ["GET", (id) => `/api/labs/${id}/audit`],
    ["GET", (id) => `/api/labs/${id}/members`],
    ["GET", (id) => `/api/labs/${id}/invitations`],
    ["POST", (id) => `/api/labs/${id}/invitations`, { email: "someone@example.test", role: "viewer" }],
    ["PATCH", (id) => `/api/labs/${id}/members/${lab.viewer.id}`, { role: "editor" }],
    ["DELETE", (id) => `/api/labs/${id}/members/${lab.viewer.id}`],
    ["DELETE", (id) => `/api/labs/${id}/invitations/${invitationId}`],
  ];
  const cells = labRoutes.flatMap(([method, path, body]) => ids.map((id) => ({ method, path, body, id })));

  it.each(cells)("$method with lab id '$id' answers 404 and changes nothing", async ({ method, path, body, id }) => {
    await expectUnchanged(async () => {
      expectError(await lab.owner.request(method, path(id), body), 404, "not_found");
    });
  });

  const innerRoutes: [string, string, unknown?][] = [
    ["PATCH", "members", { role: "editor" }],
    ["DELETE", "members"],
    ["DELETE", "invitations"],
  ];
  const innerCells = innerRoutes.flatMap(([method, collection, body]) => ids.map((id) => ({ method, collection, body, id })));

  it.each(innerCells)("$method /api/labs/[labId]/$collection/'$id' answers 404 to the owner and changes nothing", async ({ method, collection, body, id }) => {
    await expectUnchanged(async () => {
      expectError(await lab.owner.request(method, `/api/labs/${lab.labId}/${collection}/${id}`, body), 404, "not_found");
    });
  });

  it("answers 404 for another lab's invitation addressed through this lab and leaves it pending", async () => {
    const otherLabId = (await lab.outsider.get("/api/labs")).body.labs[0].id;
    const other = await invite(lab.outsider, otherLabId, uniqueEmail("foreign"), "viewer");
    const otherBefore = await labSnapshot(otherLabId);
    await expectUnchanged(async () => {
      expectError(await lab.owner.delete(`/api/labs/${lab.labId}/invitations/${other.id}`), 404, "not_found");
    });
    expect(await labSnapshot(otherLabId)).toBe(otherBefore);
  });
});
