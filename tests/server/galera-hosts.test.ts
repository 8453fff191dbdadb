// Settings and behaviour for running on several database hosts (a Galera cluster, README "Running on
// a Galera cluster"): DB_HOSTS parsing, pool settings from the environment, fail-over of new
// connections, and which transaction failures are run again. The real cluster is exercised by
// `npm run cluster:test` (scripts/cluster-test.ts).
import type { Sequelize } from "sequelize";
import { ConnectionRefusedError, DatabaseError } from "sequelize";
import { afterEach, describe, expect, it } from "vitest";
import { failOverAcrossHosts, isNodeNotReady, parseDbHosts, poolSettings, retryTransactionsOnLockConflict } from "@/lib/server/db";
import { errorResponse } from "@/lib/server/errors";

const fallback = { host: "127.0.0.1", port: 3307 };
/** What a Galera node outside the primary component answers (MariaDB Galera documentation, "WSREP has not yet prepared node"). */
const notReady = () => Object.assign(new Error("WSREP has not yet prepared node for application use"), { errno: 1047, code: "ER_UNKNOWN_COM_ERROR", fatal: false });
const refused = () => new ConnectionRefusedError(Object.assign(new Error("connect ECONNREFUSED"), { code: "ECONNREFUSED" }));
const socketClosed = () => new DatabaseError(Object.assign(new Error("socket has unexpectedly been closed"), { fatal: true, errno: 45009, code: "ER_SOCKET_UNEXPECTED_CLOSE" }) as never);

describe("DB_HOSTS", () => {
  it("reads host:port lists, defaulting a missing port to DB_PORT", () => {
    expect(parseDbHosts("127.0.0.1:3321, 127.0.0.1:3322,db3", fallback)).toEqual([
      { host: "127.0.0.1", port: 3321 },
      { host: "127.0.0.1", port: 3322 },
      { host: "db3", port: 3307 },
    ]);
    expect(parseDbHosts("[::1]:3321", fallback)).toEqual([{ host: "::1", port: 3321 }]);
  });

  it("falls back to DB_HOST:DB_PORT when unset or empty", () => {
    expect(parseDbHosts(undefined, fallback)).toEqual([fallback]);
    expect(parseDbHosts(" , ", fallback)).toEqual([fallback]);
  });

  it("rejects entries that are not host:port", () => {
    expect(() => parseDbHosts("a:b:c", fallback)).toThrow(/DB_HOSTS/);
    expect(() => parseDbHosts("db:0", fallback)).toThrow(/port/);
    expect(() => parseDbHosts("db:70000", fallback)).toThrow(/port/);
  });
});

describe("pool settings", () => {
  const saved = { ...process.env };
  afterEach(() => {
    for (const k of Object.keys(process.env)) if (k.startsWith("DB_POOL_") && !(k in saved)) delete process.env[k];
    Object.assign(process.env, saved);
  });

  it("uses the defaults when nothing is set", () => {
    for (const k of ["DB_POOL_MAX", "DB_POOL_MIN", "DB_POOL_IDLE_MS", "DB_POOL_ACQUIRE_MS", "DB_POOL_EVICT_MS"]) delete process.env[k];
    expect(poolSettings()).toEqual({ max: 10, min: 0, idle: 10_000, acquire: 20_000, evict: 1_000 });
  });

  it("reads whole numbers from the environment and ignores nonsense", () => {
    Object.assign(process.env, { DB_POOL_MAX: "4", DB_POOL_MIN: "9", DB_POOL_ACQUIRE_MS: "abc", DB_POOL_EVICT_MS: "-5", DB_POOL_IDLE_MS: "2500" });
    // min never exceeds max; invalid values keep the default.
    expect(poolSettings()).toEqual({ max: 4, min: 4, idle: 2500, acquire: 20_000, evict: 1_000 });
  });
});

describe("fail-over of new connections", () => {
  function fakeCluster(behaviour: Record<number, "refuse" | "not-ready" | "ok" | "denied">) {
    const tried: number[] = [];
    const manager = {
      async connect(config: { port: number }) {
        tried.push(config.port);
        const b = behaviour[config.port];
        if (b === "refuse") throw refused();
        if (b === "denied") throw Object.assign(new Error("Access denied"), { name: "SequelizeAccessDeniedError" });
        return {
          port: config.port,
          query: async () => {
            if (b === "not-ready") throw notReady();
            return [{ 1: 1 }];
          },
          end: async () => undefined,
        };
      },
    };
    const sequelize = { connectionManager: manager } as unknown as Sequelize;
    const hosts = [3321, 3322, 3323].map((port) => ({ host: "127.0.0.1", port }));
    failOverAcrossHosts(sequelize, hosts);
    return { connect: (manager.connect as (c: object) => Promise<{ port: number }>).bind(manager), tried };
  }

  it("skips a host that refuses and one that is not ready, then stays on the one that answered", async () => {
    const cluster = fakeCluster({ 3321: "refuse", 3322: "not-ready", 3323: "ok" });
    expect((await cluster.connect({})).port).toBe(3323);
    expect((await cluster.connect({})).port).toBe(3323);
    expect(cluster.tried).toEqual([3321, 3322, 3323, 3323]);
  });

  it("fails with the last connection error when no host answers", async () => {
    const cluster = fakeCluster({ 3321: "refuse", 3322: "refuse", 3323: "refuse" });
    await expect(cluster.connect({})).rejects.toThrow(/ECONNREFUSED/);
  });

  it("does not hide other errors (wrong password) behind another host", async () => {
    const cluster = fakeCluster({ 3321: "denied", 3322: "ok", 3323: "ok" });
    await expect(cluster.connect({})).rejects.toThrow(/Access denied/);
    expect(cluster.tried).toEqual([3321]);
  });
});

describe("transaction retries on a cluster", () => {
  /** A transaction() that runs the callback, then fails at COMMIT on the first `times` attempts. */
  function fakeSequelize(error: () => unknown, times: number) {
    let calls = 0;
    const fake = {
      transaction: async (fn: (t: unknown) => Promise<unknown>) => {
        calls++;
        const result = await fn({});
        if (calls <= times) throw error();
        return result;
      },
    };
    return { wrapped: retryTransactionsOnLockConflict(fake as unknown as Sequelize) as unknown as typeof fake, calls: () => calls };
  }

  it("runs again when a node was not ready (1047)", async () => {
    const f = fakeSequelize(() => new DatabaseError(notReady() as never), 2);
    await expect(f.wrapped.transaction(async () => "ok")).resolves.toBe("ok");
    expect(f.calls()).toBe(3);
  });

  it("runs again when the connection was lost before COMMIT", async () => {
    let attempt = 0;
    const fake = {
      transaction: async (fn: (t: unknown) => Promise<unknown>) => fn({}),
    };
    const wrapped = retryTransactionsOnLockConflict(fake as unknown as Sequelize) as unknown as typeof fake;
    await expect(
      wrapped.transaction(async () => {
        attempt++;
        if (attempt === 1) throw socketClosed();
        return "saved";
      }),
    ).resolves.toBe("saved");
    expect(attempt).toBe(2);
  });

  it("does not run again when the connection was lost during COMMIT (it may have committed)", async () => {
    const f = fakeSequelize(socketClosed, 1);
    await expect(f.wrapped.transaction(async () => "maybe")).rejects.toThrow(/unexpectedly been closed/);
    expect(f.calls()).toBe(1);
  });

  it("recognises 1047 and answers it with a retryable 503", async () => {
    expect(isNodeNotReady(new DatabaseError(notReady() as never))).toBe(true);
    expect(isNodeNotReady(new DatabaseError(Object.assign(new Error("dup"), { errno: 1062 }) as never))).toBe(false);
    const response = errorResponse(new DatabaseError(notReady() as never));
    expect(response.status).toBe(503);
    expect(Number(response.headers.get("retry-after"))).toBeGreaterThan(0);
    expect((await response.json()).error.code).toBe("unavailable");
  });
});
