import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { closeDb } from "@/lib/server/db";
import { db, labSnapshot } from "../helpers/db";
import { expectError } from "../helpers/errors";
import { anonymous, Client, invite, labWithMembers, newUser, uniqueEmail, type LabWithMembers } from "../helpers/http";
import { mailTo } from "../helpers/outbox";

const signUp = async (email: string, prefix = "invitee"): Promise<Client> => {
  const client = new Client();
  const password = "invitee-password-1";
  const reply = await client.post("/api/account/signup", { name: `Test ${prefix}`, email, password });
  if (reply.status !== 201) throw new Error(JSON.stringify(reply.body));
  if (!(await client.signIn(email, password))) throw new Error("sign-in failed");
  return client;
};

describe("invitations", () => {
  let lab: LabWithMembers;
  beforeAll(async () => {
    lab = await labWithMembers();
  });
  afterAll(closeDb);

  const roleIn = async (client: Client) => (await client.get(`/api/labs/${lab.labId}`)).body?.lab?.role;

  it("mails a link that previews the offer, refuses the wrong account, joins the right one, and works only once", async () => {
    const email = uniqueEmail("invitee");
    const { token, link } = await invite(lab.owner, lab.labId, email, "editor");
    const [mail] = mailTo(email);
    expect(mail.subject).toContain(lab.owner.name);
    expect(link).toMatch(/^http:\/\/localhost:\d+\/invite\/[A-Za-z0-9_-]{43}$/);

    const preview = await anonymous().get(`/api/invitations/${token}`);
    expect(preview.status).toBe(200);
    expect(preview.body.invitation).toMatchObject({ email, role: "editor", status: "pending" });
    expect(JSON.stringify(preview.body)).not.toMatch(/token|hash/i);

    const before = await labSnapshot(lab.labId);
    expectError(await lab.outsider.post(`/api/invitations/${token}/accept`, {}), 403, "forbidden");
    expect(await labSnapshot(lab.labId)).toBe(before);

    const invitee = await signUp(email);
    expectError(await invitee.get(`/api/labs/${lab.labId}`), 404, "not_found");
    const accepted = await invitee.post(`/api/invitations/${token}/accept`, {});
    expect(accepted.status).toBe(200);
    expect(accepted.body).toEqual({ labId: lab.labId, role: "editor" });
    expect(await roleIn(invitee)).toBe("editor");

    const afterAccept = await labSnapshot(lab.labId);
    expectError(await invitee.post(`/api/invitations/${token}/accept`, {}), 410, "gone");
    expectError(await lab.outsider.post(`/api/invitations/${token}/accept`, {}), 410, "gone");
    expect(await labSnapshot(lab.labId)).toBe(afterAccept);
    expect((await anonymous().get(`/api/invitations/${token}`)).body.invitation.status).toBe("accepted");
  });

  it("refuses an expired invitation with 410 and shows it as expired", async () => {
    const email = uniqueEmail("late");
    const { id, token } = await invite(lab.owner, lab.labId, email, "viewer");
    await db().Invitation.update({ expiresAt: new Date(Date.now() - 60_000) }, { where: { id } });
    const invitee = await signUp(email);
    const before = await labSnapshot(lab.labId);
    expectError(await invitee.post(`/api/invitations/${token}/accept`, {}), 410, "gone");
    expect(await labSnapshot(lab.labId)).toBe(before);
    expect((await anonymous().get(`/api/invitations/${token}`)).body.invitation.status).toBe("expired");
    expect(await roleIn(invitee)).toBeUndefined();
  });

  it("refuses a withdrawn invitation with 410", async () => {
    const email = uniqueEmail("withdrawn");
    const { id, token } = await invite(lab.owner, lab.labId, email, "viewer");
    expect((await lab.owner.delete(`/api/labs/${lab.labId}/invitations/${id}`)).status).toBe(204);
    const listed = (await lab.owner.get(`/api/labs/${lab.labId}/invitations`)).body.invitations.find((i: { id: number }) => i.id === id);
    expect(listed.status).toBe("revoked");
    const invitee = await signUp(email);
    expectError(await invitee.post(`/api/invitations/${token}/accept`, {}), 410, "gone");
    expect(await roleIn(invitee)).toBeUndefined();
  });

  it("lets only the newest of two invitations to one address work", async () => {
    const email = uniqueEmail("twice");
    const first = await invite(lab.owner, lab.labId, email, "viewer");
    const second = await invite(lab.owner, lab.labId, email, "editor");
    expect(second.token).not.toBe(first.token);
    const invitee = await signUp(email);
    expectError(await invitee.post(`/api/invitations/${first.token}/accept`, {}), 410, "gone");
    expect((await invitee.post(`/api/invitations/${second.token}/accept`, {})).status).toBe(200);
    expect(await roleIn(invitee)).toBe("editor");
  });

  it("refuses to withdraw an accepted invitation (409)", async () => {
    const email = uniqueEmail("accepted");
    const { id, token } = await invite(lab.owner, lab.labId, email, "viewer");
    const invitee = await signUp(email);
    expect((await invitee.post(`/api/invitations/${token}/accept`, {})).status).toBe(200);
    const before = await labSnapshot(lab.labId);
    expectError(await lab.owner.delete(`/api/labs/${lab.labId}/invitations/${id}`), 409, "conflict");
    expect(await labSnapshot(lab.labId)).toBe(before);
  });

  it.each([
    ["as written", (e: string) => e],
    ["in upper case", (e: string) => e.toUpperCase()],
  ])("refuses to invite an existing member %s (409), sends no mail and changes nothing", async (_, variant) => {
    const before = await labSnapshot(lab.labId);
    const mailsBefore = mailTo(lab.viewer.email).length;
    const reply = await lab.owner.post(`/api/labs/${lab.labId}/invitations`, { email: variant(lab.viewer.email), role: "editor" });
    expectError(reply, 409, "conflict");
    expect(reply.body.error.fields).toHaveProperty("email");
    expect(await labSnapshot(lab.labId)).toBe(before);
    expect(mailTo(lab.viewer.email)).toHaveLength(mailsBefore);
  });

  it("binds an invitation to the address regardless of letter case", async () => {
    const email = uniqueEmail("MixedCase");
    const { id, token } = await invite(lab.owner, lab.labId, email.toUpperCase(), "viewer");
    const listed = (await lab.owner.get(`/api/labs/${lab.labId}/invitations`)).body.invitations.find((i: { id: number }) => i.id === id);
    expect(listed.email).toBe(email.toLowerCase());
    const invitee = await signUp(email);
    expect((await invitee.post(`/api/invitations/${token}/accept`, {})).status).toBe(200);
    expect(await roleIn(invitee)).toBe("viewer");
  });

  it("answers 409 when an existing member accepts another invitation to the same lab, and keeps their role", async () => {
    const email = uniqueEmail("member");
    const first = await invite(lab.owner, lab.labId, email, "viewer");
    const invitee = await signUp(email);
    expect((await invitee.post(`/api/invitations/${first.token}/accept`, {})).status).toBe(200);
    // Insert a second pending invitation directly: the API itself refuses to invite a member.
    const { newToken } = await import("@/lib/server/tokens");
    const { token, hash } = newToken();
    await db().Invitation.create({ labId: lab.labId, email, role: "owner", tokenHash: hash, invitedById: lab.owner.id, expiresAt: new Date(Date.now() + 86_400_000) });
    expectError(await invitee.post(`/api/invitations/${token}/accept`, {}), 409, "conflict");
    expect(await roleIn(invitee)).toBe("viewer");
  });

  it.each([
    ["an unknown well-formed token", "a".repeat(43)],
    ["a too short token", "abc"],
    ["a token with other characters", "%24%24%24%24%24%24%24%24%24%24%24%24%24%24%24%24%24%24%24%24"],
    ["an over-long token", "a".repeat(500)],
  ])("answers 404 to preview and accept for %s", async (_, token) => {
    expectError(await anonymous().get(`/api/invitations/${token}`), 404, "not_found");
    expectError(await lab.outsider.post(`/api/invitations/${token}/accept`, {}), 404, "not_found");
  });

  // Revoking earlier invitations with a range UPDATE made simultaneous invitations in different labs
  // deadlock on the index's gap locks, and one owner got a 500.
  it("creates invitations in several labs at the same time without a failure", async () => {
    const owners = await Promise.all([0, 1, 2, 3, 4, 5].map(() => newUser("busy")));
    const labIds = await Promise.all(owners.map(async (o) => (await o.post("/api/labs", { name: "Busy lab" })).body.lab.id as number));
    for (let round = 0; round < 3; round++) {
      const replies = await Promise.all(
        owners.map((o, i) => o.post(`/api/labs/${labIds[i]}/invitations`, { email: uniqueEmail("busy"), role: "viewer" })),
      );
      expect(replies.map((r) => r.status)).toEqual(owners.map(() => 201));
    }
  });
});
