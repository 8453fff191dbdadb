// Rate limits on the account routes, through HTTP against the real MariaDB: per account and per
// address, 429 with Retry-After, and a single lock-out notice to the account's owner. The limits are
// the defaults of lib/server/rate-limit.ts accountRules (our choice; common practice).
import { randomUUID } from "node:crypto";
import { afterAll, describe, expect, it } from "vitest";
import { closeDb } from "@/lib/server/db";
import { expectError } from "../helpers/errors";
import { Client, newUser, uniqueEmail } from "../helpers/http";
import { mailTo } from "../helpers/outbox";

afterAll(closeDb);

const address = () => `203.0.113.${1 + Math.floor(Math.random() * 254)}-${randomUUID().slice(0, 8)}`;

/** One password attempt from a given address, as the sign-in form sends it. */
async function attempt(email: string, password: string, from: string) {
  const client = new Client();
  const csrf = await client.raw("GET", "/api/auth/csrf", { headers: { "x-forwarded-for": from } });
  const form = new URLSearchParams({ csrfToken: csrf.body.csrfToken, email, password, json: "true" });
  return client.raw("POST", "/api/auth/callback/credentials", {
    body: form.toString(),
    headers: { "content-type": "application/x-www-form-urlencoded", "x-forwarded-for": from },
  });
}

describe("sign-in", () => {
  it("pauses an account after 10 attempts in 15 minutes, from any address, and tells its owner once", async () => {
    const person = await newUser("guessed");
    const noticesBefore = mailTo(person.email).filter((m) => m.subject.includes("paused")).length;
    // newUser signed in once already: that is the first of the 10 attempts.
    for (let i = 0; i < 9; i++) expect((await attempt(person.email, `wrong-${i}`, address())).status).toBe(401);
    const refused = await attempt(person.email, "wrong-again", address());
    expect(refused.status).toBe(429);
    expect(refused.body.error.code).toBe("rate_limited");
    const retry = Number(refused.headers.get("retry-after"));
    expect(retry).toBeGreaterThan(0);
    expect(retry).toBeLessThanOrEqual(900);
    // next-auth's client reads `url` for the error name.
    expect(new URL(refused.body.url).searchParams.get("error")).toBe("RateLimited");
    // While paused even the right password is refused, and no second notice is sent.
    expect((await attempt(person.email, person.password, address())).status).toBe(429);
    await new Promise((r) => setTimeout(r, 300));
    const notices = mailTo(person.email).filter((m) => m.subject.includes("paused"));
    expect(notices.length - noticesBefore).toBe(1);
    expect(notices.at(-1)!.text).toContain("/forgot-password");
  });

  it("refuses the 61st attempt from one address within 10 minutes, whatever the accounts", async () => {
    const from = address();
    const statuses: number[] = [];
    for (let i = 0; i < 61; i++) statuses.push((await attempt(uniqueEmail("nobody"), "whatever-password", from)).status);
    expect(statuses.slice(0, 60).every((s) => s === 401)).toBe(true);
    expect(statuses[60]).toBe(429);
    // Another address is not affected.
    expect((await attempt(uniqueEmail("nobody"), "whatever-password", address())).status).toBe(401);
  });
});

describe("sign-up and password reset", () => {
  it("allows 20 sign-ups per address per hour", async () => {
    const from = address();
    const client = new Client();
    const statuses: number[] = [];
    // Bodies that fail validation still count: the limit is checked first.
    for (let i = 0; i < 21; i++) statuses.push((await client.raw("POST", "/api/account/signup", { body: "{}", headers: { "content-type": "application/json", "x-forwarded-for": from } })).status);
    expect(statuses.slice(0, 20).every((s) => s === 400)).toBe(true);
    expect(statuses[20]).toBe(429);
  });

  it("allows 5 reset requests per address per hour, whether or not it has an account", async () => {
    for (const email of [(await newUser("forgetful")).email, uniqueEmail("nobody")]) {
      const replies = [];
      for (let i = 0; i < 6; i++) {
        replies.push(await new Client().raw("POST", "/api/account/password/forgot", { body: JSON.stringify({ email }), headers: { "content-type": "application/json", "x-forwarded-for": address() } }));
      }
      expect(replies.slice(0, 5).map((r) => r.status)).toEqual([202, 202, 202, 202, 202]);
      expectError(replies[5], 429, "rate_limited");
      expect(Number(replies[5].headers.get("retry-after"))).toBeGreaterThan(0);
    }
  });
});
