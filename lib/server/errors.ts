import "server-only";
import { UniqueConstraintError, ForeignKeyConstraintError, ConnectionError } from "sequelize";
import { ZodError, type ZodType, type z } from "zod";
import { isConnectionLoss, isLockConflict, isNodeNotReady } from "./db";
import { InvalidKeyError, ObjectExistsError, ObjectNotFoundError, RangeNotSatisfiableError } from "./storage/errors";

// One error shape for every route: { error: { code, message, fields? } }.
export type ErrorCode =
  | "unauthenticated"
  | "forbidden"
  | "not_found"
  | "invalid_json"
  | "invalid_input"
  | "conflict"
  | "gone"
  | "rate_limited"
  | "unavailable"
  | "insufficient_storage"
  | "internal";

export class HttpError extends Error {
  constructor(
    readonly status: number,
    readonly code: ErrorCode,
    message: string,
    readonly fields?: Record<string, string>,
  ) {
    super(message);
  }
}

export const unauthenticated = () => new HttpError(401, "unauthenticated", "Sign in to continue.");
export const forbidden = (message = "Your role in this lab does not allow this.") => new HttpError(403, "forbidden", message);
export const notFound = (what = "That item") => new HttpError(404, "not_found", `${what} was not found.`);
export const conflict = (message: string, fields?: Record<string, string>) => new HttpError(409, "conflict", message, fields);
export const gone = (message: string) => new HttpError(410, "gone", message);

/**
 * Runs a write guarded by a unique-name index and turns a clash into a 409 with a field message
 * (`message` names what is taken); other errors pass through.
 */
export async function uniqueName<T>(message: string, work: () => Promise<T>): Promise<T> {
  try {
    return await work();
  } catch (error) {
    if (error instanceof UniqueConstraintError) throw conflict(message, { name: "That name is already taken." });
    throw error;
  }
}

export function fieldErrors(error: ZodError): Record<string, string> {
  const fields: Record<string, string> = {};
  for (const issue of error.issues) {
    const key = issue.path.join(".") || "_";
    fields[key] ??= issue.message;
  }
  return fields;
}

export function errorResponse(error: unknown): Response {
  if (error instanceof HttpError) {
    const body = { error: { code: error.code, message: error.message, ...(error.fields ? { fields: error.fields } : {}) } };
    const retryAfter = (error as { retryAfterSeconds?: number }).retryAfterSeconds;
    return Response.json(body, { status: error.status, headers: retryAfter ? { "Retry-After": String(retryAfter) } : undefined });
  }
  if (error instanceof ZodError) {
    return errorResponse(new HttpError(400, "invalid_input", "Some fields are not valid.", fieldErrors(error)));
  }
  if (error instanceof UniqueConstraintError) {
    return errorResponse(conflict("That already exists."));
  }
  if (error instanceof ForeignKeyConstraintError) {
    return errorResponse(notFound("A referenced item"));
  }
  if (error instanceof ObjectNotFoundError) return errorResponse(notFound("The stored file"));
  if (error instanceof ObjectExistsError) return errorResponse(conflict("That file is already stored."));
  if (error instanceof RangeNotSatisfiableError) return errorResponse(new HttpError(416, "invalid_input", "That byte range is outside the file."));
  if (error instanceof InvalidKeyError) return errorResponse(new HttpError(400, "invalid_input", "That storage key is not valid."));
  // A lock conflict that outlasted the retries (lib/server/db.ts): nothing was written; try again.
  if (isLockConflict(error)) {
    return Response.json(
      { error: { code: "unavailable", message: "The database was busy with a conflicting change; nothing was saved. Try again." } },
      { status: 503, headers: { "Retry-After": "1" } },
    );
  }
  // 1047: a Galera node outside the primary component refused the statement; nothing was run.
  if (error instanceof ConnectionError || isConnectionLoss(error) || isNodeNotReady(error)) {
    return Response.json(
      { error: { code: "unavailable", message: "The database is not reachable right now; try again shortly." } },
      { status: 503, headers: { "Retry-After": "2" } },
    );
  }
  // The blob store's disk (or quota) is full: nothing was kept for this write (the local store
  // writes to a temp file and publishes with link(), so no partial object exists), and an open upload
  // keeps its earlier parts. 507 Insufficient Storage (RFC 4918 §11.5) says so plainly; Retry-After
  // because space may be freed by an administrator without anything changing on the client.
  if (isStorageFull(error)) {
    return Response.json(
      { error: { code: "insufficient_storage", message: "The server's storage is full, so nothing was stored for this request. Parts already uploaded are kept; try again once space has been freed." } },
      { status: 507, headers: { "Retry-After": "60" } },
    );
  }
  // The client went away mid-request (closed tab, aborted fetch): nobody reads an answer, and it is
  // not a server fault worth a log line.
  if ((error as NodeJS.ErrnoException | null)?.code === "ECONNRESET") return new Response(null, { status: 499 });
  // Unknown errors are logged on the server only; the client gets a generic message.
  console.error("[fluxframe] unexpected error:", error);
  return Response.json({ error: { code: "internal", message: "Something went wrong on our side." } }, { status: 500 });
}

/** ENOSPC (no space left on device) or EDQUOT (disk quota exceeded), possibly wrapped as a cause. */
export function isStorageFull(error: unknown): boolean {
  for (let e = error as { code?: unknown; cause?: unknown } | null, depth = 0; e && typeof e === "object" && depth < 5; e = e.cause as typeof e, depth++) {
    if (e.code === "ENOSPC" || e.code === "EDQUOT") return true;
  }
  return false;
}

/** Reads a JSON body and validates it; bad JSON and invalid fields become 400s with the field messages. */
export async function parseBody<S extends ZodType>(request: Request, schema: S): Promise<z.infer<S>> {
  const text = await request.text();
  let value: unknown;
  try {
    value = text.length ? JSON.parse(text) : undefined;
  } catch {
    throw new HttpError(400, "invalid_json", "The request body is not valid JSON.");
  }
  if (value === undefined) throw new HttpError(400, "invalid_json", "The request needs a JSON body.");
  const result = schema.safeParse(value);
  if (!result.success) throw new HttpError(400, "invalid_input", "Some fields are not valid.", fieldErrors(result.error));
  return result.data;
}

export function parseWith<S extends ZodType>(schema: S, value: unknown, what = "The address"): z.infer<S> {
  const result = schema.safeParse(value);
  if (!result.success) throw new HttpError(400, "invalid_input", `${what} is not valid.`, fieldErrors(result.error));
  return result.data;
}
