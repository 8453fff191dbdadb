import { describe, expect, it } from "vitest";
import { anonymous, labWithMembers } from "../helpers/http";

describe("smoke", () => {
  it("answers health and builds a lab with three roles", async () => {
    expect((await anonymous().get("/api/health")).status).toBe(200);
    const { labId, owner, viewer } = await labWithMembers();
    const members = await owner.get(`/api/labs/${labId}/members`);
    expect(members.status).toBe(200);
    expect(members.body.members.map((m: { role: string }) => m.role).sort()).toEqual(["editor", "owner", "viewer"]);
    expect((await viewer.post(`/api/labs/${labId}/invitations`, { email: "x@example.test", role: "viewer" })).status).toBe(403);
  });
});
