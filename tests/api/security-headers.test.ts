// Security headers and cookies as a browser receives them from the production build: a CSP with a
// fresh nonce on every page that Next's own scripts carry, framing refused, no sniffing, no referrer
// to other sites, and session cookies that scripts cannot read.
import { describe, expect, it } from "vitest";
import { anonymous, newUser } from "../helpers/http";

describe("security headers", () => {
  it("every page has a CSP whose nonce is fresh per request and is on each of Next's scripts", async () => {
    const nonces = [];
    for (const path of ["/signin", "/forgot-password", "/about"]) {
      const reply = await anonymous().raw("GET", path);
      expect(reply.status).toBe(200);
      const csp = reply.headers.get("content-security-policy") ?? "";
      const nonce = /'nonce-([^']+)'/.exec(csp)?.[1];
      expect(nonce, csp).toBeTruthy();
      expect(csp).toContain("frame-ancestors 'none'");
      expect(csp).not.toMatch(/script-src[^;]*'unsafe-inline'/);
      const html = String(reply.body);
      const scripts = [...html.matchAll(/<script\b[^>]*>/g)].map((m) => m[0]);
      expect(scripts.length).toBeGreaterThan(0);
      for (const tag of scripts) expect(tag, tag).toContain(`nonce="${nonce}"`);
      nonces.push(nonce);
      expect(reply.headers.get("x-content-type-options")).toBe("nosniff");
      expect(reply.headers.get("referrer-policy")).toBe("same-origin");
      expect(reply.headers.get("x-frame-options")).toBe("DENY");
    }
    expect(new Set(nonces).size).toBe(nonces.length);
  });

  it("session cookies are HttpOnly and SameSite=Lax (Secure is added on https deployments)", async () => {
    const person = await newUser("cookie");
    const csrf = await person.raw("GET", "/api/auth/csrf");
    const cookies = csrf.headers.getSetCookie().concat(
      (await person.raw("POST", "/api/auth/callback/credentials", {
        body: new URLSearchParams({ csrfToken: csrf.body.csrfToken, email: person.email, password: person.password, json: "true" }).toString(),
        headers: { "content-type": "application/x-www-form-urlencoded" },
      })).headers.getSetCookie(),
    );
    const session = cookies.find((c) => c.startsWith("next-auth.session-token="));
    expect(session, cookies.join("\n")).toBeTruthy();
    expect(session).toMatch(/HttpOnly/i);
    expect(session).toMatch(/SameSite=Lax/i);
  });
});
