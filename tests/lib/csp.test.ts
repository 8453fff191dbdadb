// The Content-Security-Policy text: what each directive allows (W3C CSP Level 3; MDN's directive
// reference). The live header is checked through HTTP in tests/api/security-headers.test.ts.
import { describe, expect, it } from "vitest";
import { contentSecurityPolicy, storageOrigins } from "@/lib/csp";

const parse = (csp: string) => new Map(csp.split(";").map((d) => d.trim().split(/\s+/)).map(([name, ...values]) => [name, values]));

describe("contentSecurityPolicy", () => {
  it("allows scripts only with this request's nonce (and what they load), never inline or eval in production", () => {
    const csp = parse(contentSecurityPolicy({ nonce: "abc123" }));
    expect(csp.get("script-src")).toEqual(["'self'", "'nonce-abc123'", "'strict-dynamic'"]);
    expect(csp.get("script-src")).not.toContain("'unsafe-inline'");
    expect(csp.get("object-src")).toEqual(["'none'"]);
    expect(csp.get("frame-ancestors")).toEqual(["'none'"]);
    expect(csp.get("worker-src")).toEqual(["'self'", "blob:"]);
    expect(csp.get("connect-src")).toEqual(["'self'"]);
    expect(csp.has("upgrade-insecure-requests")).toBe(false);
  });

  it("adds eval for next dev, the object store for presigned reads, and upgrades on https", () => {
    const csp = parse(contentSecurityPolicy({ nonce: "n", dev: true, connectExtra: ["https://s3.example.org"], https: true }));
    expect(csp.get("script-src")).toContain("'unsafe-eval'");
    expect(csp.get("connect-src")).toEqual(["'self'", "https://s3.example.org"]);
    expect(csp.has("upgrade-insecure-requests")).toBe(true);
  });

  it("finds the storage origin from the S3 settings", () => {
    expect(storageOrigins({ STORAGE_DRIVER: "local" })).toEqual([]);
    expect(storageOrigins({ STORAGE_DRIVER: "s3", S3_ENDPOINT: "http://127.0.0.1:4569/some/path" })).toEqual(["http://127.0.0.1:4569"]);
    expect(storageOrigins({ STORAGE_DRIVER: "s3" })).toEqual(["https://*.amazonaws.com"]);
  });
});
