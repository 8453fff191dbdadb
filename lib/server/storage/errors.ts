import "server-only";

/** Base class, so a route's error mapper can recognise every storage failure with one check. */
export class BlobStoreError extends Error {}

/** Stored objects are write-once: raw stacks are never replaced in place. */
export class ObjectExistsError extends BlobStoreError {
  readonly name = "ObjectExistsError";
  constructor(readonly key: string) {
    super(`An object already exists at "${key}"; stored objects are never overwritten.`);
  }
}

export class ObjectNotFoundError extends BlobStoreError {
  readonly name = "ObjectNotFoundError";
  constructor(readonly key: string) {
    super(`No object at "${key}".`);
  }
}

/** Ranges are inclusive byte offsets [start, end] and must lie inside the object. */
export class RangeNotSatisfiableError extends BlobStoreError {
  readonly name = "RangeNotSatisfiableError";
  constructor(
    readonly key: string,
    readonly range: { start: number; end: number },
    /** The object's size in bytes, when known. */
    readonly size?: number,
  ) {
    super(
      `Byte range ${range.start}-${range.end} is not satisfiable for "${key}"` +
        (size === undefined ? "." : ` (size ${size} bytes).`),
    );
  }
}

export class InvalidKeyError extends BlobStoreError {
  readonly name = "InvalidKeyError";
  constructor(
    readonly key: string,
    reason: string,
  ) {
    super(`Invalid storage key ${JSON.stringify(key)}: ${reason}.`);
  }
}
