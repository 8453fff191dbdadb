import "server-only";
import { createHash } from "node:crypto";
import { Readable, Transform } from "node:stream";

export type BlobBody = NodeJS.ReadableStream | Buffer | Uint8Array;

export interface PutOptions {
  signal?: AbortSignal;
  contentType?: string;
}

export interface BlobStat {
  size: number;
  /** Opaque and unquoted; quote it before sending it as an HTTP ETag. */
  etag: string;
  modified: Date;
}

/** Raw stacks are stored byte for byte and never rewritten: one interface, a local and an S3 driver. */
export interface BlobStore {
  readonly kind: "local" | "s3";
  /** Write-once: fails with ObjectExistsError if the key exists. Streams; returns size and SHA-256 (hex) of what was written. */
  put(key: string, body: BlobBody, options?: PutOptions): Promise<{ size: number; sha256: string }>;
  /** Whole object or an inclusive byte range [start, end]; throws ObjectNotFoundError / RangeNotSatisfiableError. */
  get(key: string, range?: { start: number; end: number }): Promise<NodeJS.ReadableStream>;
  stat(key: string): Promise<BlobStat | null>;
  /** Keys starting with `prefix`, sorted. */
  list(prefix: string): Promise<string[]>;
  /** Idempotent: deleting a missing key is not an error. */
  delete(key: string): Promise<void>;
  /** Removes every object under a non-empty prefix (upload staging clean-up); returns how many. */
  deletePrefix(prefix: string): Promise<number>;
  /** s3: a short-lived presigned GET URL (works with a Range header); local: null (the app streams itself). */
  presignGet(key: string, expiresInSeconds: number): Promise<string | null>;
  /** Re-reads the object and returns its SHA-256 (the dataset page's "verify"). */
  sha256(key: string): Promise<string>;
}

/**
 * Passes bytes through unchanged while counting them and hashing them with SHA-256, so a put reads
 * its body once. `result()` is only meaningful after the stream has ended.
 */
export function hashingPassThrough(): { stream: Transform; result(): { size: number; sha256: string } } {
  const hash = createHash("sha256");
  let size = 0;
  const stream = new Transform({
    transform(chunk: Buffer | string, _encoding, callback) {
      const bytes = typeof chunk === "string" ? Buffer.from(chunk) : chunk;
      hash.update(bytes);
      size += bytes.length;
      callback(null, bytes);
    },
  });
  return { stream, result: () => ({ size, sha256: hash.digest("hex") }) };
}

export function toReadable(body: BlobBody): Readable {
  if (body instanceof Uint8Array) return Readable.from([Buffer.from(body.buffer, body.byteOffset, body.byteLength)]);
  if (body instanceof Readable) return body;
  // An old-style stream (NodeJS.ReadableStream) is still async-iterable.
  return Readable.from(body as AsyncIterable<Buffer>, { objectMode: false });
}

export async function sha256OfStream(stream: NodeJS.ReadableStream): Promise<string> {
  const hash = createHash("sha256");
  for await (const chunk of stream as AsyncIterable<Buffer | string>) hash.update(chunk);
  return hash.digest("hex");
}

export function abortError(signal: AbortSignal): Error {
  const reason: unknown = signal.reason;
  if (reason instanceof Error) return reason;
  return Object.assign(new Error("The put was aborted."), { name: "AbortError" });
}
