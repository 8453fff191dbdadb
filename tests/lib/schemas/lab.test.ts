import { describe, expect, it } from "vitest";
import { auditQuery, createInvitationBody, idParam, invitationToken, labName } from "@/lib/schemas/lab";

describe("route ids", () => {
  it.each([
    ["1", 1],
    ["42", 42],
    ["4294967295", 4294967295],
  ])("accepts %j as %i", (raw, id) => {
    expect(idParam.parse(raw)).toBe(id);
  });

  it.each(["abc", "-1", "0", "1.5", "1e99", "4294967296", "", "NaN", "Infinity", "0x10", "1.0", " 1", "01"])("rejects %j", (raw) => {
    expect(idParam.safeParse(raw).success).toBe(false);
  });
});

describe("lab name", () => {
  it("trims and accepts 2 to 120 characters", () => {
    expect(labName.parse("  Ab  ")).toBe("Ab");
    expect(labName.safeParse("L".repeat(120)).success).toBe(true);
  });

  it.each(["A", "  A  ", "L".repeat(121), ""])("rejects %j", (value) => {
    expect(labName.safeParse(value).success).toBe(false);
  });
});

describe("invitation body", () => {
  it("lower-cases the address and accepts the three roles only", () => {
    expect(createInvitationBody.parse({ email: "X@Example.TEST", role: "editor" })).toEqual({ email: "x@example.test", role: "editor" });
    expect(createInvitationBody.safeParse({ email: "x@example.test", role: "admin" }).success).toBe(false);
    expect(createInvitationBody.safeParse({ email: "x@example.test", role: "Owner" }).success).toBe(false);
  });
});

describe("invitation token", () => {
  it("accepts 20 to 100 URL-safe base64 characters", () => {
    expect(invitationToken.safeParse("A-_z".repeat(5)).success).toBe(true);
    expect(invitationToken.safeParse("a".repeat(100)).success).toBe(true);
  });

  it.each(["a".repeat(19), "a".repeat(101), `${"a".repeat(20)}/`, `${"a".repeat(20)}=`, `${"a".repeat(20)} `])("rejects %j", (value) => {
    expect(invitationToken.safeParse(value).success).toBe(false);
  });
});

describe("audit query", () => {
  it("defaults the limit to 100 and reads it from a string", () => {
    expect(auditQuery.parse({})).toEqual({ limit: 100 });
    expect(auditQuery.parse({ limit: "5", action: "lab." })).toEqual({ limit: 5, action: "lab." });
  });

  it.each([{ limit: "0" }, { limit: "501" }, { limit: "abc" }, { limit: "2.5" }, { action: "a".repeat(65) }])("rejects %j", (query) => {
    expect(auditQuery.safeParse(query).success).toBe(false);
  });
});
