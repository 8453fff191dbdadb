// Faults the API answers with a retryable error instead of a 500: the database going away under a
// query (503 + Retry-After) and a full disk under the blob store (507 Insufficient Storage, RFC 4918
// §11.5), plus the local store's disk-full testing aid (STORAGE_FAULT_AFTER_BYTES).
import { mkdtempSync, readdirSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import mariadb from "mariadb";
import { ConnectionRefusedError, DatabaseError, UniqueConstraintError } from "sequelize";
import { afterEach, describe, expect, it } from "vitest";
import { isConnectionLoss } from "@/lib/server/db";
import { errorResponse, isStorageFull } from "@/lib/server/errors";
import { createLocalStore, storeFromEnv } from "@/lib/server/storage";

/** What the mariadb driver (3.0) throws when the server closes the socket mid-query. */
const socketClosed = () =>
  Object.assign(new Error("socket has unexpectedly been closed"), { fatal: true, errno: 45009, code: "ER_SOCKET_UNEXPECTED_CLOSE", sqlState: "08S01" });

describe("database connection loss", () => {
  it("is recognised when Sequelize wraps a lost connection as a DatabaseError", () => {
    expect(isConnectionLoss(new DatabaseError(socketClosed() as never))).toBe(true);
    // The server shutting down kills running statements with 1053 ER_SERVER_SHUTDOWN (not marked fatal).
    expect(isConnectionLoss(new DatabaseError(Object.assign(new Error("Server shutdown in progress"), { errno: 1053, fatal: false }) as never))).toBe(true);
    expect(isConnectionLoss(new ConnectionRefusedError(Object.assign(new Error("connect ECONNREFUSED"), { code: "ECONNREFUSED" })))).toBe(true);
  });

  it("is recognised for a real refused connection from the mariadb driver", async () => {
    // Port 9 (discard) is closed on this machine's loopback: the driver's own error, not a made-up one.
    const error = await mariadb.createConnection({ host: "127.0.0.1", port: 9, user: "nobody", connectTimeout: 2000 }).then(
      (c) => c.end().then(() => null),
      (e: unknown) => e,
    );
    expect(error).not.toBeNull();
    expect(isConnectionLoss(new DatabaseError(error as never))).toBe(true);
  });

  it("is not claimed for ordinary SQL errors", () => {
    expect(isConnectionLoss(new DatabaseError(Object.assign(new Error("Duplicate entry"), { errno: 1062, fatal: false, code: "ER_DUP_ENTRY" }) as never))).toBe(false);
    expect(isConnectionLoss(new DatabaseError(Object.assign(new Error("syntax"), { errno: 1064, fatal: false }) as never))).toBe(false);
    expect(isConnectionLoss(new Error("plain"))).toBe(false);
    expect(isConnectionLoss(null)).toBe(false);
  });

  it("answers 503 with Retry-After in the one error shape, not 500", async () => {
    const response = errorResponse(new DatabaseError(socketClosed() as never));
    expect(response.status).toBe(503);
    expect(Number(response.headers.get("retry-after"))).toBeGreaterThan(0);
    const body = await response.json();
    expect(body).toEqual({ error: { code: "unavailable", message: expect.stringMatching(/database/i) } });
  });

  it("leaves a unique clash a 409", () => {
    expect(errorResponse(new UniqueConstraintError({})).status).toBe(409);
  });
});

describe("full disk", () => {
  const enospc = () => Object.assign(new Error("ENOSPC: no space left on device, write"), { code: "ENOSPC" });

  it("is recognised directly, as EDQUOT, and as the cause of a wrapping error", () => {
    expect(isStorageFull(enospc())).toBe(true);
    expect(isStorageFull(Object.assign(new Error("quota"), { code: "EDQUOT" }))).toBe(true);
    expect(isStorageFull(new Error("wrapped", { cause: enospc() }))).toBe(true);
    expect(isStorageFull(Object.assign(new Error("gone"), { code: "ENOENT" }))).toBe(false);
    expect(isStorageFull(undefined)).toBe(false);
  });

  it("answers 507 Insufficient Storage with Retry-After and a message that says what was kept", async () => {
    const response = errorResponse(enospc());
    expect(response.status).toBe(507);
    expect(Number(response.headers.get("retry-after"))).toBeGreaterThan(0);
    const body = await response.json();
    expect(body.error.code).toBe("insufficient_storage");
    expect(body.error.message).toMatch(/storage is full/);
    expect(body.error.message).toMatch(/already uploaded are kept/);
  });
});

describe("the local store's disk-full testing aid", () => {
  let dir = "";
  afterEach(() => rmSync(dir, { recursive: true, force: true }));

  it("fails a write with ENOSPC once the limit would be passed, publishing nothing and keeping earlier objects", async () => {
    dir = mkdtempSync(join(tmpdir(), "fluxframe-full-"));
    const store = createLocalStore(dir, { faultAfterBytes: 1000 });
    await store.put("a/first", Buffer.alloc(600, 1));
    const error = await store.put("a/second", Buffer.alloc(600, 2)).then(
      () => null,
      (e: unknown) => e,
    );
    expect((error as NodeJS.ErrnoException).code).toBe("ENOSPC");
    expect(isStorageFull(error)).toBe(true);
    expect(await store.stat("a/second")).toBeNull();
    // No temp file was left behind beside the objects.
    expect(readdirSync(join(dir, "a"))).toEqual(["first"]);
    expect((await store.stat("a/first"))?.size).toBe(600);
    // A smaller write that still fits goes through.
    await store.put("a/third", Buffer.alloc(400, 3));
    expect((await store.stat("a/third"))?.size).toBe(400);
  });

  it("is off unless STORAGE_FAULT_AFTER_BYTES is set to a number", async () => {
    dir = mkdtempSync(join(tmpdir(), "fluxframe-full-"));
    const unlimited = storeFromEnv({ STORAGE_DRIVER: "local", STORAGE_DIR: dir, STORAGE_FAULT_AFTER_BYTES: "nonsense" });
    await unlimited.put("big", Buffer.alloc(100_000));
    const limited = storeFromEnv({ STORAGE_DRIVER: "local", STORAGE_DIR: dir, STORAGE_FAULT_AFTER_BYTES: "10" });
    await expect(limited.put("small", Buffer.alloc(11))).rejects.toMatchObject({ code: "ENOSPC" });
  });
});
