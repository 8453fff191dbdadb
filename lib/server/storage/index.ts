import "server-only";
import { resolve } from "node:path";
import type { BlobStore } from "./blob-store";
import { createLocalStore } from "./local-store";
import { createS3Store } from "./s3-store";

export type { BlobBody, BlobStat, BlobStore, PutOptions } from "./blob-store";
export {
  BlobStoreError,
  InvalidKeyError,
  ObjectExistsError,
  ObjectNotFoundError,
  RangeNotSatisfiableError,
} from "./errors";
export { assertValidKey, assertValidPrefix } from "./keys";
export { createLocalStore } from "./local-store";
export { createS3Store, type S3StoreOptions } from "./s3-store";

type Env = Record<string, string | undefined>;

/** Builds the store described by the environment: local folder by default, or S3. */
export function storeFromEnv(env: Env = process.env): BlobStore {
  const driver = env.STORAGE_DRIVER || "local";
  if (driver === "local") {
    const faultAfter = env.STORAGE_FAULT_AFTER_BYTES ? Number(env.STORAGE_FAULT_AFTER_BYTES) : undefined;
    return createLocalStore(resolve(/* turbopackIgnore: true */ process.cwd(), env.STORAGE_DIR || ".data/blobs"), {
      faultAfterBytes: faultAfter !== undefined && Number.isFinite(faultAfter) && faultAfter >= 0 ? faultAfter : undefined,
    });
  }
  if (driver === "s3") {
    if (!env.S3_BUCKET) throw new Error("STORAGE_DRIVER=s3 needs S3_BUCKET.");
    const hasKeys = Boolean(env.S3_ACCESS_KEY_ID && env.S3_SECRET_ACCESS_KEY);
    return createS3Store({
      bucket: env.S3_BUCKET,
      endpoint: env.S3_ENDPOINT || undefined,
      region: env.S3_REGION || undefined,
      // Without explicit keys the SDK's default chain applies (instance role, shared config).
      credentials: hasKeys
        ? { accessKeyId: env.S3_ACCESS_KEY_ID!, secretAccessKey: env.S3_SECRET_ACCESS_KEY! }
        : undefined,
      forcePathStyle: env.S3_FORCE_PATH_STYLE === "1" || env.S3_FORCE_PATH_STYLE === "true",
    });
  }
  throw new Error(`STORAGE_DRIVER must be "local" or "s3", got "${driver}".`);
}

// One store per process, rebuilt only if its settings change (tests switch drivers).
const holder = globalThis as typeof globalThis & { __fluxframeBlobStore?: { config: string; store: BlobStore } };
const STORAGE_ENV = [
  "STORAGE_DRIVER",
  "STORAGE_DIR",
  "S3_ENDPOINT",
  "S3_REGION",
  "S3_BUCKET",
  "S3_ACCESS_KEY_ID",
  "S3_SECRET_ACCESS_KEY",
  "S3_FORCE_PATH_STYLE",
  "STORAGE_FAULT_AFTER_BYTES",
] as const;

export function blobStore(): BlobStore {
  const config = JSON.stringify(STORAGE_ENV.map((name) => process.env[name] ?? ""));
  if (holder.__fluxframeBlobStore?.config !== config) {
    holder.__fluxframeBlobStore = { config, store: storeFromEnv() };
  }
  return holder.__fluxframeBlobStore.store;
}
