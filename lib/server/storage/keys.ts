import "server-only";
import { InvalidKeyError, RangeNotSatisfiableError } from "./errors";

// Keys are the same for both drivers, so an object can move from the local folder to S3 unchanged.
// The character set is safe as a file path and needs no URL escaping.
const KEY_PATTERN = /^[A-Za-z0-9_.-]+(?:\/[A-Za-z0-9_.-]+)*$/;
const PREFIX_PATTERN = /^(?:[A-Za-z0-9_.-]+\/)*[A-Za-z0-9_.-]*$/;
// S3's own limit is 1024 bytes of UTF-8; keys here are ASCII, so characters = bytes.
const MAX_KEY_LENGTH = 1024;

function hasDotSegment(path: string): boolean {
  return path.split("/").some((segment) => segment === "." || segment === "..");
}

/** Object keys: `a/b/c.tif` — no leading, trailing or doubled slash, no `.`/`..` segments. */
export function assertValidKey(key: string): void {
  if (typeof key !== "string" || key.length === 0) throw new InvalidKeyError(String(key), "empty");
  if (key.length > MAX_KEY_LENGTH) throw new InvalidKeyError(key, `longer than ${MAX_KEY_LENGTH} characters`);
  if (!KEY_PATTERN.test(key)) {
    throw new InvalidKeyError(key, "use only A-Z a-z 0-9 / _ . - with no leading, trailing or doubled slash");
  }
  if (hasDotSegment(key)) throw new InvalidKeyError(key, "'.' and '..' segments are not allowed");
}

/** Prefixes are plain string prefixes of keys (S3 semantics), e.g. `uploads/42/` or `uploads/4`; "" is all. */
export function assertValidPrefix(prefix: string): void {
  if (typeof prefix !== "string") throw new InvalidKeyError(String(prefix), "not a string");
  if (prefix.length > MAX_KEY_LENGTH) throw new InvalidKeyError(prefix, `longer than ${MAX_KEY_LENGTH} characters`);
  if (!PREFIX_PATTERN.test(prefix)) {
    throw new InvalidKeyError(prefix, "use only A-Z a-z 0-9 / _ . - with no leading or doubled slash");
  }
  if (hasDotSegment(prefix)) throw new InvalidKeyError(prefix, "'.' and '..' segments are not allowed");
}

/** Checks the shape of an inclusive range; `size` (bytes) adds the bound check when known. */
export function assertValidRange(key: string, range: { start: number; end: number }, size?: number): void {
  const { start, end } = range;
  const wellFormed = Number.isSafeInteger(start) && Number.isSafeInteger(end) && start >= 0 && end >= start;
  if (!wellFormed || (size !== undefined && end >= size)) throw new RangeNotSatisfiableError(key, range, size);
}
