import { afterAll, describe, expect, it } from "vitest";
import { closeDb } from "@/lib/server/db";
import { db, usersWithEmail } from "../helpers/db";
import { expectError } from "../helpers/errors";
import { anonymous, Client, newUser, resetToken, uniqueEmail } from "../helpers/http";
import { mailTo, resetLink } from "../helpers/outbox";

const password = "correct-horse-battery";

afterAll(closeDb);

describe("sign-up", () => {
  it("creates an account, stores the address in lower case and answers 201 without secrets", async () => {
    const email = uniqueEmail("SignUp");
    const reply = await anonymous().post("/api/account/signup", { name: "  Ada Example  ", email, password });
    expect(reply.status).toBe(201);
    expect(reply.body.user).toEqual({ id: expect.any(Number), email: email.toLowerCase(), name: "Ada Example", isSiteAdmin: false });
    expect(await usersWithEmail(email.toLowerCase())).toBe(1);
  });

  it.each([
    ["the same address", (e: string) => e],
    ["the address in different letter case", (e: string) => e.toUpperCase()],
    ["the address with surrounding spaces", (e: string) => `  ${e} `],
  ])("refuses a second account with %s (409) and keeps one row", async (_, variant) => {
    const email = uniqueEmail("dup");
    expect((await anonymous().post("/api/account/signup", { name: "First", email, password })).status).toBe(201);
    const again = await anonymous().post("/api/account/signup", { name: "Second", email: variant(email), password });
    expectError(again, 409, "conflict");
    expect(again.body.error.fields).toHaveProperty("email");
    expect(await usersWithEmail(email)).toBe(1);
  });

  it("answers 201 to one and 409 to the other of two simultaneous sign-ups with one address", async () => {
    const email = uniqueEmail("race");
    const replies = await Promise.all(
      [email, email.toUpperCase(), email].map((e, i) => anonymous().post("/api/account/signup", { name: `Racer ${i}`, email: e, password })),
    );
    expect(replies.map((r) => r.status).sort()).toEqual([201, 409, 409]);
    for (const reply of replies.filter((r) => r.status === 409)) expectError(reply, 409, "conflict");
    expect(await usersWithEmail(email)).toBe(1);
  });

  it.each([
    ["an invalid e-mail", { email: "not-an-address" }, "email"],
    ["an empty e-mail", { email: "" }, "email"],
    ["an over-long e-mail", { email: `${"a".repeat(250)}@example.test` }, "email"],
    ["a short password", { password: "short" }, "password"],
    ["an over-long password", { password: "p".repeat(201) }, "password"],
    ["an over-long name", { name: "n".repeat(121) }, "name"],
    ["a blank name", { name: "   " }, "name"],
    ["a number as name", { name: 42 }, "name"],
  ])("answers 400 with the field for %s and creates nothing", async (_, override, field) => {
    const email = uniqueEmail("bad");
    const reply = await anonymous().post("/api/account/signup", { name: "Valid Name", email, password, ...override });
    expectError(reply, 400, "invalid_input");
    expect(Object.keys(reply.body.error.fields)).toContain(field);
    expect(await usersWithEmail(email)).toBe(0);
  });
});

describe("sign-in and /api/me", () => {
  it("refuses a wrong password and an unknown address", async () => {
    const user = await newUser("signin");
    expect(await new Client().signIn(user.email, "wrong-password-123")).toBe(false);
    expect(await new Client().signIn(uniqueEmail("nobody"), password)).toBe(false);
    expect(await new Client().signIn(user.email, user.password)).toBe(true);
  });

  it("signs in with the address in different letter case", async () => {
    const user = await newUser("case");
    expect(await new Client().signIn(user.email.toUpperCase(), user.password)).toBe(true);
  });

  it("returns the signed-in user and labs, never a password hash", async () => {
    const user = await newUser("me");
    await user.post("/api/labs", { name: "My own lab" });
    const reply = await user.raw("GET", "/api/me");
    expect(reply.status).toBe(200);
    expect(reply.body.user).toEqual({ id: user.id, email: user.email, name: user.name, isSiteAdmin: false });
    expect(reply.body.labs.map((l: { name: string }) => l.name)).toEqual(["My own lab"]);
    const text = JSON.stringify(reply.body);
    expect(text).not.toMatch(/hash/i);
    expect(text).not.toContain("$2");
    // The hash really exists in the row, so its absence above is the output filter's doing.
    const row = await db().User.unscoped().findByPk(user.id);
    expect(row!.passwordHash.startsWith("$2")).toBe(true);
  });

  it("does not put the hash in the session either", async () => {
    const user = await newUser("session");
    const session = await user.get("/api/auth/session");
    expect(session.body.user.email).toBe(user.email);
    expect(JSON.stringify(session.body)).not.toContain("$2");
  });
});

describe("forgotten password", () => {
  it("answers 202 for unknown and known addresses and mails only the known one", async () => {
    const user = await newUser("forgot");
    const unknown = uniqueEmail("unknown");
    const forUnknown = await anonymous().post("/api/account/password/forgot", { email: unknown });
    const forKnown = await anonymous().post("/api/account/password/forgot", { email: user.email.toUpperCase() });
    expect([forUnknown.status, forKnown.status]).toEqual([202, 202]);
    expect(forUnknown.body).toEqual(forKnown.body);
    await resetLink(user.email);
    expect(mailTo(unknown)).toEqual([]);
    expect(mailTo(user.email)).toHaveLength(1);
  });

  it("resets with the mailed token once: the new password works, the old one and a re-use do not", async () => {
    const user = await newUser("reset");
    const token = await resetToken(user.email);
    const reset = await anonymous().post("/api/account/password/reset", { token, password: "the-new-password-1" });
    expect(reset.status).toBe(200);

    const reused = await anonymous().post("/api/account/password/reset", { token, password: "another-password-2" });
    expectError(reused, 410, "gone");

    expect(await new Client().signIn(user.email, user.password)).toBe(false);
    expect(await new Client().signIn(user.email, "another-password-2")).toBe(false);
    expect(await new Client().signIn(user.email, "the-new-password-1")).toBe(true);
  });

  it("ends the account's existing sessions and its other reset links when the password is reset", async () => {
    const user = await newUser("sessions");
    expect((await user.get("/api/me")).status).toBe(200);
    const older = await resetToken(user.email);
    const token = await resetToken(user.email);
    expect((await anonymous().post("/api/account/password/reset", { token, password: "the-new-password-1" })).status).toBe(200);
    // The session that signed in before the reset is refused; a new sign-in works.
    expect((await user.get("/api/me")).status).toBe(401);
    const again = new Client();
    expect(await again.signIn(user.email, "the-new-password-1")).toBe(true);
    expect((await again.get("/api/me")).status).toBe(200);
    // The reset link mailed earlier no longer works either.
    expectError(await anonymous().post("/api/account/password/reset", { token: older, password: "a-third-password-3" }), 410, "gone");
  });

  it("refuses an expired token with 410 and keeps the old password", async () => {
    const user = await newUser("expired");
    const token = await resetToken(user.email);
    await db().PasswordReset.update({ expiresAt: new Date(Date.now() - 60_000) }, { where: { userId: user.id } });
    const reply = await anonymous().post("/api/account/password/reset", { token, password: "the-new-password-1" });
    expectError(reply, 410, "gone");
    expect(await new Client().signIn(user.email, "the-new-password-1")).toBe(false);
    expect(await new Client().signIn(user.email, user.password)).toBe(true);
  });

  it("refuses an unknown token with 400 on the token field", async () => {
    const reply = await anonymous().post("/api/account/password/reset", { token: "x".repeat(43), password: "the-new-password-1" });
    expectError(reply, 400, "invalid_input");
    expect(reply.body.error.fields).toHaveProperty("token");
  });

  it("refuses a short new password with the mailed token and leaves the token usable", async () => {
    const user = await newUser("shortpw");
    const token = await resetToken(user.email);
    const short = await anonymous().post("/api/account/password/reset", { token, password: "short" });
    expectError(short, 400, "invalid_input");
    expect(short.body.error.fields).toHaveProperty("password");
    expect((await anonymous().post("/api/account/password/reset", { token, password: "long-enough-now-1" })).status).toBe(200);
  });
});
