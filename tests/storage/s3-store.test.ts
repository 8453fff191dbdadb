import { randomBytes } from "node:crypto";
import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { PutObjectCommand, S3Client } from "@aws-sdk/client-s3";
import S3rver from "s3rver";
import { afterAll, beforeAll, describe, expect, test } from "vitest";
import { createS3Store, ObjectExistsError, type BlobStore } from "@/lib/server/storage";
import { describeBlobStoreContract, readAll, sha256Hex } from "./contract";

const BUCKET = "fluxframe-test";
// S3's smallest allowed part, so a round trip of a few MiB crosses part boundaries.
const PART_SIZE = 5 * 1024 * 1024;

let dir = "";
let server: S3rver;
let endpoint = "";
let store: BlobStore;

// Credentials for the loopback fake only (s3rver's documented defaults).
const credentials = { accessKeyId: "S3RVER", secretAccessKey: "S3RVER" };

function client(): S3Client {
  return new S3Client({
    endpoint,
    region: "us-east-1",
    credentials,
    forcePathStyle: true,
    requestChecksumCalculation: "WHEN_REQUIRED",
    responseChecksumValidation: "WHEN_REQUIRED",
  });
}

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), "fluxframe-s3rver-"));
  // Port 0: the OS picks a free port, so parallel runs never collide.
  server = new S3rver({
    address: "127.0.0.1",
    port: 0,
    silent: true,
    directory: dir,
    configureBuckets: [{ name: BUCKET }],
  });
  const { port } = await server.run();
  endpoint = `http://127.0.0.1:${port}`;
  store = createS3Store({ bucket: BUCKET, endpoint, credentials, forcePathStyle: true, partSize: PART_SIZE });
});

afterAll(async () => {
  await server?.close();
  rmSync(dir, { recursive: true, force: true });
});

describeBlobStoreContract("s3", () => store, { partSize: PART_SIZE });

describe("s3 driver", { timeout: 30_000 }, () => {
  test("presigns a GET that plain fetch can read a byte range from (206 and the right bytes)", async () => {
    const bytes = randomBytes(300_000);
    await store.put("presigned/raw.tif", bytes);

    const url = await store.presignGet("presigned/raw.tif", 60);
    expect(url).toMatch(/^http:\/\/127\.0\.0\.1:\d+\/fluxframe-test\/presigned\/raw\.tif\?.*X-Amz-Signature=/);

    const reply = await fetch(url!, { headers: { Range: "bytes=1000-1999" } });
    expect(reply.status).toBe(206);
    expect(reply.headers.get("content-range")).toBe(`bytes 1000-1999/${bytes.length}`);
    expect(Buffer.compare(Buffer.from(await reply.arrayBuffer()), bytes.subarray(1000, 2000))).toBe(0);
  });

  test("refuses presigned lifetimes outside 1 s … 7 days (S3's limit)", async () => {
    await expect(store.presignGet("presigned/raw.tif", 0)).rejects.toThrow(RangeError);
    await expect(store.presignGet("presigned/raw.tif", 8 * 24 * 3600)).rejects.toThrow(RangeError);
  });

  test("refuses to overwrite an object another client already wrote to the bucket", async () => {
    const original = Buffer.from("written by someone else");
    await client().send(new PutObjectCommand({ Bucket: BUCKET, Key: "foreign/raw.tif", Body: original }));

    await expect(store.put("foreign/raw.tif", randomBytes(10))).rejects.toBeInstanceOf(ObjectExistsError);
    expect((await readAll(await store.get("foreign/raw.tif"))).toString()).toBe(original.toString());
  });

  test("sends If-None-Match: * with the write that publishes the object, so S3 can refuse a racing writer", async () => {
    // s3rver ignores the header, so the request itself is the evidence; AWS answers a lost race with 412.
    const seen: { method: string; query: Record<string, unknown>; ifNoneMatch?: string }[] = [];
    const recording = client();
    recording.middlewareStack.add(
      (next) => async (args) => {
        const request = args.request as { method: string; query: Record<string, unknown>; headers: Record<string, string> };
        seen.push({ method: request.method, query: request.query, ifNoneMatch: request.headers["if-none-match"] });
        return next(args);
      },
      { step: "finalizeRequest" },
    );
    const recorded = createS3Store({ bucket: BUCKET, client: recording, partSize: PART_SIZE });

    await recorded.put("conditional/small.tif", randomBytes(1000));
    await recorded.put("conditional/multipart.tif", randomBytes(PART_SIZE + 1000));

    const singlePut = seen.find((r) => r.method === "PUT" && !("uploadId" in r.query));
    const complete = seen.find((r) => r.method === "POST" && "uploadId" in r.query);
    expect(singlePut?.ifNoneMatch).toBe("*");
    expect(complete?.ifNoneMatch).toBe("*");
  });

  test("reports the stored ETag and size from the bucket", async () => {
    const bytes = randomBytes(5000);
    await store.put("stat/raw.tif", bytes);
    const info = await store.stat("stat/raw.tif");
    // For a single-part upload S3's ETag is the MD5 of the bytes (AWS S3 API reference, "Common Response Headers").
    expect(info?.etag).toMatch(/^[0-9a-f]{32}$/);
    expect(info?.size).toBe(5000);
    expect(await store.sha256("stat/raw.tif")).toBe(sha256Hex(bytes));
  });
});
