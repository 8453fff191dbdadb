import { join } from "node:path";
import { afterEach, describe, expect, test, vi } from "vitest";
import { blobStore, storeFromEnv } from "@/lib/server/storage";

describe("choosing the blob store from the environment", () => {
  afterEach(() => vi.unstubAllEnvs());

  test("defaults to the local driver in .data/blobs under the working directory", async () => {
    const store = storeFromEnv({});
    expect(store.kind).toBe("local");
    // No I/O: presignGet is null only for the local driver.
    expect(await store.presignGet("a/b", 60)).toBeNull();
  });

  test("builds the S3 driver from S3_* settings", () => {
    const store = storeFromEnv({
      STORAGE_DRIVER: "s3",
      S3_BUCKET: "lab-stacks",
      S3_ENDPOINT: "http://127.0.0.1:9",
      S3_REGION: "eu-central-1",
      S3_ACCESS_KEY_ID: "id",
      S3_SECRET_ACCESS_KEY: "secret",
      S3_FORCE_PATH_STYLE: "1",
    });
    expect(store.kind).toBe("s3");
  });

  test("presigns path-style URLs against the configured endpoint without contacting it", async () => {
    const store = storeFromEnv({
      STORAGE_DRIVER: "s3",
      S3_BUCKET: "lab-stacks",
      S3_ENDPOINT: "http://127.0.0.1:9",
      S3_ACCESS_KEY_ID: "id",
      S3_SECRET_ACCESS_KEY: "secret",
      S3_FORCE_PATH_STYLE: "true",
    });
    const url = new URL((await store.presignGet("datasets/7/raw.tif", 300))!);
    expect(`${url.origin}${url.pathname}`).toBe("http://127.0.0.1:9/lab-stacks/datasets/7/raw.tif");
    expect(url.searchParams.get("X-Amz-Expires")).toBe("300");
  });

  test.each([
    ["an unknown driver", { STORAGE_DRIVER: "ftp" }, /STORAGE_DRIVER must be "local" or "s3"/],
    ["s3 without a bucket", { STORAGE_DRIVER: "s3" }, /needs S3_BUCKET/],
    ["a bucket name under 3 characters", { STORAGE_DRIVER: "s3", S3_BUCKET: "ab" }, /at least 3 characters/],
  ])("refuses %s with a message naming the setting", (_label, env, message) => {
    expect(() => storeFromEnv(env)).toThrow(message);
  });

  test("blobStore() reuses one store per process until the storage settings change", () => {
    vi.stubEnv("STORAGE_DRIVER", "local");
    vi.stubEnv("STORAGE_DIR", join("tmp", "blobs-a"));
    const first = blobStore();
    expect(blobStore()).toBe(first);

    vi.stubEnv("STORAGE_DIR", join("tmp", "blobs-b"));
    expect(blobStore()).not.toBe(first);
  });
});
