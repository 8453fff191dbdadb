// Every error answer has exactly one shape: { error: { code, message, fields? } }.
import { expect } from "vitest";
import type { Reply } from "./http";

export function expectErrorShape(body: unknown): void {
  expect(body, "error body is a JSON object").toBeTypeOf("object");
  expect(body).not.toBeNull();
  expect(Object.keys(body as object)).toEqual(["error"]);
  const error = (body as { error: Record<string, unknown> }).error;
  expect(error).toBeTypeOf("object");
  expect(Object.keys(error).filter((k) => !["code", "message", "fields"].includes(k)), "unexpected keys in error").toEqual([]);
  expect(error.code).toBeTypeOf("string");
  expect(error.message).toBeTypeOf("string");
  expect((error.message as string).length).toBeGreaterThan(0);
  if ("fields" in error) {
    expect(error.fields).toBeTypeOf("object");
    for (const value of Object.values(error.fields as object)) expect(value).toBeTypeOf("string");
  }
}

/** Asserts status and error code together (so a failure shows both) and the shape of the body. */
export function expectError(reply: Reply, status: number, code: string): void {
  expect({ status: reply.status, code: reply.body?.error?.code }).toEqual({ status, code });
  expectErrorShape(reply.body);
}
