// Transactions rolled back by an InnoDB lock conflict (1213 deadlock, 1205 lock wait timeout) run
// again from the start, a few times; other errors are not retried (MariaDB/InnoDB documentation:
// "Always be prepared to re-issue a transaction if it fails due to deadlock").
import type { Sequelize } from "sequelize";
import { describe, expect, it } from "vitest";
import { isLockConflict, retryTransactionsOnLockConflict } from "@/lib/server/db";

const lockError = (errno: number) => Object.assign(new Error("Deadlock found when trying to get lock"), { parent: { errno } });

function fakeSequelize(failures: unknown[]) {
  let calls = 0;
  const fake = {
    transaction: async (fn: (t: unknown) => Promise<unknown>) => {
      calls++;
      const failure = failures.shift();
      if (failure) throw failure;
      return fn({});
    },
  };
  const wrapped = retryTransactionsOnLockConflict(fake as unknown as Sequelize) as unknown as typeof fake;
  return { wrapped, calls: () => calls };
}

describe("lock-conflict retries", () => {
  it("recognises deadlocks and lock wait timeouts only", () => {
    expect(isLockConflict(lockError(1213))).toBe(true);
    expect(isLockConflict(lockError(1205))).toBe(true);
    expect(isLockConflict(Object.assign(new Error("dup"), { parent: { errno: 1062 } }))).toBe(false);
    expect(isLockConflict(null)).toBe(false);
  });

  it("runs a transaction again after a deadlock and returns its result", async () => {
    const { wrapped, calls } = fakeSequelize([lockError(1213), lockError(1205)]);
    await expect(wrapped.transaction(async () => "done")).resolves.toBe("done");
    expect(calls()).toBe(3);
  });

  it("gives up after three retries, and never retries other errors", async () => {
    const stuck = fakeSequelize([lockError(1213), lockError(1213), lockError(1213), lockError(1213), lockError(1213)]);
    await expect(stuck.wrapped.transaction(async () => "never")).rejects.toThrow(/Deadlock/);
    expect(stuck.calls()).toBe(4);
    const other = fakeSequelize([new Error("syntax")]);
    await expect(other.wrapped.transaction(async () => "never")).rejects.toThrow("syntax");
    expect(other.calls()).toBe(1);
  });
});
