import { UniqueConstraintError } from "sequelize";
import { describe, expect, it, vi } from "vitest";
import { z } from "zod";
import { errorResponse, HttpError, notFound, parseBody } from "@/lib/server/errors";

const schema = z.object({ name: z.string().max(3) });
const request = (body: string) => new Request("http://localhost/x", { method: "POST", body });

async function caught(promise: Promise<unknown>): Promise<HttpError> {
  try {
    await promise;
  } catch (error) {
    if (error instanceof HttpError) return error;
    throw error;
  }
  throw new Error("did not throw");
}

describe("parseBody", () => {
  it("returns the validated body", async () => {
    expect(await parseBody(request('{"name":"abc","extra":1}'), schema)).toEqual({ name: "abc" });
  });

  it.each(["", "{", "{'name':'a'}", "undefined"])("answers invalid_json for %j", async (text) => {
    const error = await caught(parseBody(request(text), schema));
    expect({ status: error.status, code: error.code }).toEqual({ status: 400, code: "invalid_json" });
  });

  it("answers invalid_input with one message per field", async () => {
    const error = await caught(parseBody(request('{"name":"abcd"}'), schema));
    expect({ status: error.status, code: error.code, keys: Object.keys(error.fields!) }).toEqual({ status: 400, code: "invalid_input", keys: ["name"] });
  });

  it("names a body that is not an object with the key _", async () => {
    const error = await caught(parseBody(request("[1]"), schema));
    expect(Object.keys(error.fields!)).toEqual(["_"]);
  });
});

describe("errorResponse", () => {
  it("keeps the status, code, message and fields of a known error", async () => {
    const response = errorResponse(new HttpError(409, "conflict", "Taken.", { email: "Already registered." }));
    expect(response.status).toBe(409);
    expect(await response.json()).toEqual({ error: { code: "conflict", message: "Taken.", fields: { email: "Already registered." } } });
  });

  it("leaves fields out when there are none", async () => {
    expect(await errorResponse(notFound("That lab")).json()).toEqual({ error: { code: "not_found", message: "That lab was not found." } });
  });

  it("maps a unique-key violation to 409", async () => {
    const response = errorResponse(new UniqueConstraintError({ message: "Duplicate entry 'x@y' for key 'email'" }));
    expect(response.status).toBe(409);
    expect(JSON.stringify(await response.json())).not.toContain("x@y");
  });

  it("maps anything else to a generic 500 without the cause", async () => {
    const quiet = vi.spyOn(console, "error").mockImplementation(() => {});
    const response = errorResponse(new Error("password_hash column exploded"));
    quiet.mockRestore();
    expect(response.status).toBe(500);
    const text = await response.text();
    expect(JSON.parse(text)).toEqual({ error: { code: "internal", message: expect.any(String) } });
    expect(text).not.toContain("password_hash");
  });
});
