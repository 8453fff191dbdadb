// The access helper on its own, against the real test database, with next-auth's session faked:
// each refusal comes before the handler runs, and a success hands the handler the caller's role.
import { randomUUID } from "node:crypto";
import { NextRequest } from "next/server";
import { afterAll, beforeAll, beforeEach, describe, expect, it, vi } from "vitest";
import type { Action, Role } from "@/lib/permissions";

const session = vi.hoisted(() => ({ current: null as null | { user: { id: number } } }));
vi.mock("next-auth", async (importOriginal) => ({
  ...(await importOriginal<typeof import("next-auth")>()),
  getServerSession: vi.fn(async () => session.current),
}));

const { requireLabAccess, withLab } = await import("@/lib/server/access");
const { HttpError } = await import("@/lib/server/errors");
const { db, closeDb } = await import("@/lib/server/db");

const users = {} as Record<Role | "outsider", number>;
let labId: number;
let otherLabId: number;

beforeAll(async () => {
  const { User, Lab, Membership } = db();
  const make = async (label: string) =>
    (await User.create({ email: `helper-${label}-${randomUUID().slice(0, 8)}@example.test`, name: label, passwordHash: "x" })).id;
  for (const who of ["owner", "editor", "viewer", "outsider"] as const) users[who] = await make(who);
  labId = (await Lab.create({ name: "Helper lab", createdById: users.owner })).id;
  otherLabId = (await Lab.create({ name: "Helper other lab", createdById: users.outsider })).id;
  for (const role of ["owner", "editor", "viewer"] as const) await Membership.create({ labId, userId: users[role], role });
  await Membership.create({ labId: otherLabId, userId: users.outsider, role: "owner" });
});
afterAll(closeDb);
beforeEach(() => {
  session.current = null;
});

const signInAs = (id: number) => {
  session.current = { user: { id } };
};

async function refusal(labIdRaw: unknown, action: Action): Promise<{ status: number; code: string }> {
  try {
    await requireLabAccess(labIdRaw, action);
  } catch (error) {
    if (error instanceof HttpError) return { status: error.status, code: error.code };
    throw error;
  }
  throw new Error("access was granted");
}

describe("requireLabAccess", () => {
  it("answers 401 when nobody is signed in", async () => {
    expect(await refusal(String(labId), "lab.read")).toEqual({ status: 401, code: "unauthenticated" });
  });

  it("answers 401 when the session names an account that no longer exists", async () => {
    signInAs(4_294_967_000);
    expect(await refusal(String(labId), "lab.read")).toEqual({ status: 401, code: "unauthenticated" });
  });

  it.each(["abc", "-1", "0", "1.5", "1e99", "", undefined, null, ["1"], "4294967296"])(
    "answers 404 for the lab id %j",
    async (raw) => {
      signInAs(users.owner);
      expect(await refusal(raw, "lab.read")).toEqual({ status: 404, code: "not_found" });
    },
  );

  it("answers 404 for a lab that does not exist", async () => {
    signInAs(users.owner);
    expect(await refusal("4294967295", "lab.read")).toEqual({ status: 404, code: "not_found" });
  });

  it("answers 404, not 403, to a member of another lab, even for an action their role there allows", async () => {
    signInAs(users.outsider);
    expect(await refusal(String(labId), "lab.read")).toEqual({ status: 404, code: "not_found" });
    expect(await refusal(String(labId), "members.changeRole")).toEqual({ status: 404, code: "not_found" });
  });

  it.each([
    ["viewer", "members.invite"],
    ["viewer", "datasets.upload"],
    ["editor", "members.changeRole"],
    ["editor", "audit.read"],
    ["editor", "lab.rename"],
  ] as const)("answers 403 to a %s asking for %s", async (role, action) => {
    signInAs(users[role]);
    expect(await refusal(String(labId), action)).toEqual({ status: 403, code: "forbidden" });
  });

  it.each([
    ["viewer", "lab.read"],
    ["editor", "datasets.upload"],
    ["owner", "members.changeRole"],
  ] as const)("grants a %s %s and returns the lab, the user and the role", async (role, action) => {
    signInAs(users[role]);
    const access = await requireLabAccess(String(labId), action);
    expect({ role: access.role, labId: access.lab.id, userId: access.user.id }).toEqual({ role, labId, userId: users[role] });
  });

  it("accepts a numeric lab id as well as a string", async () => {
    signInAs(users.viewer);
    expect((await requireLabAccess(labId, "lab.read")).role).toBe("viewer");
  });
});

describe("withLab", () => {
  const call = async (labIdRaw: string) => {
    const handler = vi.fn(async (_request: NextRequest, ctx: { role: Role }) => Response.json({ role: ctx.role }));
    const route = withLab(handler, { need: "members.invite" });
    const response = await route(new NextRequest(`http://localhost/api/labs/${labIdRaw}/invitations`), {
      params: Promise.resolve({ labId: labIdRaw }),
    });
    return { status: response.status, body: await response.json(), ran: handler.mock.calls.length > 0 };
  };

  it.each([
    ["nobody", null, 401, "unauthenticated"],
    ["a member of another lab", "outsider", 404, "not_found"],
    ["a viewer", "viewer", 403, "forbidden"],
    ["an editor", "editor", 403, "forbidden"],
  ] as const)("refuses %s with %i before the handler runs", async (_, who, status, code) => {
    if (who) signInAs(users[who]);
    const result = await call(String(labId));
    expect(result).toEqual({ status, body: { error: { code, message: expect.any(String) } }, ran: false });
  });

  it("answers 404 for a garbage lab id before the handler runs", async () => {
    signInAs(users.owner);
    expect(await call("abc")).toMatchObject({ status: 404, ran: false });
  });

  it("runs the handler for the owner with the owner's role", async () => {
    signInAs(users.owner);
    expect(await call(String(labId))).toEqual({ status: 200, body: { role: "owner" }, ran: true });
  });

  it("turns an unexpected error in the handler into a generic 500 that does not reveal the cause", async () => {
    signInAs(users.owner);
    const quiet = vi.spyOn(console, "error").mockImplementation(() => {});
    const route = withLab(async () => {
      throw new Error("secret internal detail");
    }, { need: "lab.read" });
    const response = await route(new NextRequest("http://localhost/api/labs/x"), { params: Promise.resolve({ labId: String(labId) }) });
    const text = await response.text();
    quiet.mockRestore();
    expect(response.status).toBe(500);
    expect(JSON.parse(text)).toEqual({ error: { code: "internal", message: expect.any(String) } });
    expect(text).not.toContain("secret internal detail");
  });
});
