// The Content-Security-Policy text: what each directive allows (W3C CSP Level 3; MDN's directive
// reference). The live header is checked through HTTP in tests/api/security-headers.test.ts.
import { describe, expect, it } from "vitest";
import { contentSecurityPolicy, storageOrigins } from "@/lib/csp";
import { storeFromEnv } from "@/lib/server/storage";

const parse = (csp: string) => new Map(csp.split(";").map((d) => d.trim().split(/\s+/)).map(([name, ...values]) => [name, values]));

describe("contentSecurityPolicy", () => {
  it("allows scripts only with this request's nonce (and what they load), never inline or eval in production", () => {
    const csp = parse(contentSecurityPolicy({ nonce: "abc123" }));
    expect(csp.get("script-src")).toEqual(["'self'", "'nonce-abc123'", "'strict-dynamic'", "'wasm-unsafe-eval'"]);
    expect(csp.get("script-src")).not.toContain("'unsafe-eval'");
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

  it("allows the origin of every presigned URL the S3 driver hands out, path-style or virtual-hosted", async () => {
    // The URLs come from the driver itself (storeFromEnv → @aws-sdk/s3-request-presigner; signing
    // needs no network). With path style off and a host name the SDK puts the bucket in the host.
    const base = { STORAGE_DRIVER: "s3", S3_BUCKET: "my-bucket", S3_ACCESS_KEY_ID: "k", S3_SECRET_ACCESS_KEY: "s", S3_REGION: "eu-central-1" };
    const cases: [Record<string, string>, string][] = [
      [{ S3_ENDPOINT: "https://s3.example.com" }, "https://my-bucket.s3.example.com"],
      [{ S3_ENDPOINT: "http://localhost:9000" }, "http://my-bucket.localhost:9000"],
      [{ S3_ENDPOINT: "https://s3.example.com", S3_FORCE_PATH_STYLE: "1" }, "https://s3.example.com"],
      [{ S3_ENDPOINT: "http://127.0.0.1:9000" }, "http://127.0.0.1:9000"],
    ];
    for (const [extra, origin] of cases) {
      const env = { ...base, ...extra };
      const url = new URL((await storeFromEnv(env).presignGet("originals/1/x.tif", 60))!);
      expect(url.origin, JSON.stringify(extra)).toBe(origin);
      expect(storageOrigins(env), JSON.stringify(extra)).toContain(origin);
    }
    // Without an endpoint (AWS itself) the wildcard covers both styles.
    const aws = new URL((await storeFromEnv(base).presignGet("originals/1/x.tif", 60))!);
    expect(aws.hostname.endsWith(".amazonaws.com")).toBe(true);
    expect(storageOrigins(base)).toEqual(["https://*.amazonaws.com"]);
  });
});
