import "server-only";
import { UniqueConstraintError, ForeignKeyConstraintError, ConnectionError } from "sequelize";
import { ZodError, type ZodType, type z } from "zod";
import { isLockConflict } from "./db";
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
  if (error instanceof ConnectionError) {
    return Response.json(
      { error: { code: "unavailable", message: "The database is not reachable right now; try again shortly." } },
      { status: 503, headers: { "Retry-After": "2" } },
    );
  }
  // The client went away mid-request (closed tab, aborted fetch): nobody reads an answer, and it is
  // not a server fault worth a log line.
  if ((error as NodeJS.ErrnoException | null)?.code === "ECONNRESET") return new Response(null, { status: 499 });
  // Unknown errors are logged on the server only; the client gets a generic message.
  console.error("[fluxframe] unexpected error:", error);
  return Response.json({ error: { code: "internal", message: "Something went wrong on our side." } }, { status: 500 });
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
