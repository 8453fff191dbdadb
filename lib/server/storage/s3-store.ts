import "server-only";
import {
  DeleteObjectCommand,
  DeleteObjectsCommand,
  GetObjectCommand,
  HeadObjectCommand,
  ListObjectsV2Command,
  S3Client,
  S3ServiceException,
} from "@aws-sdk/client-s3";
import { Upload } from "@aws-sdk/lib-storage";
import { getSignedUrl } from "@aws-sdk/s3-request-presigner";
import { Readable } from "node:stream";
import { pipeline } from "node:stream/promises";
import { abortError, hashingPassThrough, sha256OfStream, toReadable, type BlobStore } from "./blob-store";
import { InvalidKeyError, ObjectExistsError, ObjectNotFoundError, RangeNotSatisfiableError } from "./errors";
import { assertValidKey, assertValidPrefix, assertValidRange } from "./keys";

export interface S3StoreOptions {
  bucket: string;
  /** e.g. http://127.0.0.1:9000 for an S3-compatible server; omit for AWS. */
  endpoint?: string;
  region?: string;
  credentials?: { accessKeyId: string; secretAccessKey: string };
  /** Path-style URLs (endpoint/bucket/key); most self-hosted S3-compatible servers need it. */
  forcePathStyle?: boolean;
  /** Multipart part size in bytes; S3's minimum is 5 MiB. Memory per put is about partSize × queueSize. */
  partSize?: number;
  /** Parts uploaded in parallel. */
  queueSize?: number;
  /**
   * Send `If-None-Match: *` with the write, so S3 itself refuses to replace an object (AWS since 2024,
   * also MinIO and R2). Turn off only for a server that rejects the header.
   */
  conditionalWrites?: boolean;
  /** Use this client instead of building one (tests, shared connection pools). */
  client?: S3Client;
}

const DEFAULT_PART_SIZE = 16 * 1024 * 1024;
// S3 caps presigned URLs at 7 days.
const MAX_PRESIGN_SECONDS = 7 * 24 * 3600;

function statusOf(error: unknown): number | undefined {
  return (error as { $metadata?: { httpStatusCode?: number } } | undefined)?.$metadata?.httpStatusCode;
}

function isNotFound(error: unknown): boolean {
  return (
    statusOf(error) === 404 ||
    (error instanceof S3ServiceException && (error.name === "NoSuchKey" || error.name === "NotFound"))
  );
}

/** "bytes 0-9/1234" → { start, end, size } */
function parseContentRange(value: string | undefined): { start: number; end: number; size: number } | null {
  const match = value ? /^bytes (\d+)-(\d+)\/(\d+)$/.exec(value.trim()) : null;
  return match ? { start: Number(match[1]), end: Number(match[2]), size: Number(match[3]) } : null;
}

/** The first `length` bytes of `source`; the rest is not read (the source is destroyed). */
function takeBytes(source: Readable, length: number): Readable {
  async function* take() {
    let remaining = length;
    // Leaving the loop early destroys the source, which closes its connection.
    for await (const chunk of source as AsyncIterable<Buffer>) {
      const part = chunk.subarray(0, remaining);
      remaining -= part.length;
      yield part;
      if (remaining === 0) break;
    }
  }
  return Readable.from(take(), { objectMode: false });
}

export function createS3Store(options: S3StoreOptions): BlobStore {
  const { bucket, partSize = DEFAULT_PART_SIZE, queueSize = 4, conditionalWrites = true } = options;
  if (!bucket || bucket.length < 3) throw new Error("S3 store: a bucket name of at least 3 characters is required.");
  const client =
    options.client ??
    new S3Client({
      endpoint: options.endpoint,
      region: options.region ?? "us-east-1",
      credentials: options.credentials,
      forcePathStyle: options.forcePathStyle ?? false,
      // The SDK's default CRC trailers (aws-chunked bodies) are not understood by every
      // S3-compatible server; integrity is covered by our own SHA-256 of every object.
      requestChecksumCalculation: "WHEN_REQUIRED",
      responseChecksumValidation: "WHEN_REQUIRED",
    });

  async function listKeys(prefix: string): Promise<string[]> {
    const keys: string[] = [];
    let token: string | undefined;
    do {
      const page = await client.send(
        new ListObjectsV2Command({ Bucket: bucket, Prefix: prefix || undefined, ContinuationToken: token }),
      );
      for (const item of page.Contents ?? []) if (item.Key) keys.push(item.Key);
      token = page.IsTruncated ? page.NextContinuationToken : undefined;
    } while (token);
    return keys.sort();
  }

  const store: BlobStore = {
    kind: "s3",

    /*
     * Write-once on S3 has two layers. HeadObject first fails fast before any bytes move, but two puts
     * of one key can both pass it. `If-None-Match: *` closes that race on servers that honour it (the
     * loser gets 412 and its upload is discarded); on servers that ignore the header the last writer
     * wins, so callers should use keys unique to one upload (e.g. containing the dataset id).
     */
    async put(key, body, putOptions = {}) {
      assertValidKey(key);
      const { signal, contentType } = putOptions;
      signal?.throwIfAborted();
      if (await store.stat(key)) throw new ObjectExistsError(key);

      const hashing = hashingPassThrough();
      // Aborting destroys the body, so the uploader stops before its next request and removes any
      // parts already sent. The signal is deliberately not given to Upload: its abort() rejects at
      // once while a PutObject already in flight still lands.
      const feeding = pipeline(toReadable(body), hashing.stream, { signal }).catch(() => {
        // The error reaches the uploader through the destroyed hashing stream.
      });
      const upload = new Upload({
        client,
        params: {
          Bucket: bucket,
          Key: key,
          Body: hashing.stream,
          ContentType: contentType ?? "application/octet-stream",
          ...(conditionalWrites ? { IfNoneMatch: "*" } : {}),
        },
        partSize,
        queueSize,
        leavePartsOnError: false,
      });
      try {
        await upload.done();
      } catch (error) {
        hashing.stream.destroy();
        if (signal?.aborted) throw abortError(signal);
        if (statusOf(error) === 412 || statusOf(error) === 409) throw new ObjectExistsError(key);
        throw error;
      }
      await feeding;
      if (signal?.aborted) {
        // The abort came after the last byte was sent: undo, so an aborted put never leaves an object.
        await store.delete(key);
        throw abortError(signal);
      }
      return hashing.result();
    },

    async get(key, range) {
      assertValidKey(key);
      if (range) assertValidRange(key, range);
      let reply;
      try {
        reply = await client.send(
          new GetObjectCommand({
            Bucket: bucket,
            Key: key,
            Range: range ? `bytes=${range.start}-${range.end}` : undefined,
          }),
        );
      } catch (error) {
        if (isNotFound(error)) throw new ObjectNotFoundError(key);
        if (range && (statusOf(error) === 416 || (error as Error).name === "InvalidRange")) {
          throw new RangeNotSatisfiableError(key, range);
        }
        throw error;
      }
      const body = reply.Body as Readable | undefined;
      if (!body) throw new Error(`S3 returned no body for "${key}".`);
      if (!range) return body;

      // S3 clamps an end beyond the object to its last byte; the contract is stricter.
      const served = parseContentRange(reply.ContentRange);
      if (!served || served.start !== range.start || served.end < Math.min(range.end, served.size - 1)) {
        body.destroy();
        throw new Error(`S3 answered range ${range.start}-${range.end} of "${key}" with "${reply.ContentRange}".`);
      }
      if (range.end >= served.size) {
        body.destroy();
        throw new RangeNotSatisfiableError(key, range, served.size);
      }
      // Some S3-compatible servers (s3rver 3.7) read "bytes=0-0" as open-ended; trim to what was asked.
      return served.end > range.end ? takeBytes(body, range.end - range.start + 1) : body;
    },

    async stat(key) {
      assertValidKey(key);
      try {
        const head = await client.send(new HeadObjectCommand({ Bucket: bucket, Key: key }));
        return {
          size: head.ContentLength ?? 0,
          etag: (head.ETag ?? "").replace(/^"|"$/g, ""),
          modified: head.LastModified ?? new Date(0),
        };
      } catch (error) {
        if (isNotFound(error)) return null;
        throw error;
      }
    },

    async list(prefix) {
      assertValidPrefix(prefix);
      return listKeys(prefix);
    },

    async delete(key) {
      assertValidKey(key);
      // S3 answers 204 for a missing key too, so this is idempotent without a check.
      await client.send(new DeleteObjectCommand({ Bucket: bucket, Key: key }));
    },

    async deletePrefix(prefix) {
      assertValidPrefix(prefix);
      if (prefix === "") throw new InvalidKeyError(prefix, "refusing to delete every object in the bucket");
      const keys = await listKeys(prefix);
      // DeleteObjects takes at most 1000 keys per request.
      for (let i = 0; i < keys.length; i += 1000) {
        const batch = keys.slice(i, i + 1000);
        const reply = await client.send(
          new DeleteObjectsCommand({
            Bucket: bucket,
            Delete: { Objects: batch.map((Key) => ({ Key })), Quiet: true },
          }),
        );
        const failed = reply.Errors ?? [];
        if (failed.length > 0) {
          throw new Error(`S3 could not delete ${failed.length} object(s) under "${prefix}": ${failed[0].Message}`);
        }
      }
      return keys.length;
    },

    async presignGet(key, expiresInSeconds) {
      assertValidKey(key);
      if (!Number.isInteger(expiresInSeconds) || expiresInSeconds < 1 || expiresInSeconds > MAX_PRESIGN_SECONDS) {
        throw new RangeError(`Presigned URL lifetime must be 1…${MAX_PRESIGN_SECONDS} s, got ${expiresInSeconds}.`);
      }
      return getSignedUrl(client, new GetObjectCommand({ Bucket: bucket, Key: key }), { expiresIn: expiresInSeconds });
    },

    async sha256(key) {
      return sha256OfStream(await store.get(key));
    },
  };
  return store;
}
