// JOB_STALE_SECONDS: how long a running ingest job may go without a heartbeat before another worker
// takes it over (lib/server/jobs.ts). Anything unset, malformed or too small keeps the safe default.
import { describe, expect, it } from "vitest";
import { staleSeconds } from "@/lib/server/jobs";

describe("the stale-job threshold", () => {
  it("is 60 s unless a whole number of at least 5 s is given", () => {
    expect(staleSeconds(undefined)).toBe(60);
    expect(staleSeconds("")).toBe(60);
    expect(staleSeconds("  ")).toBe(60);
    expect(staleSeconds("abc")).toBe(60);
    expect(staleSeconds("4")).toBe(60);
    expect(staleSeconds("7.5")).toBe(60);
    expect(staleSeconds("-10")).toBe(60);
    expect(staleSeconds("5")).toBe(5);
    expect(staleSeconds("10")).toBe(10);
    expect(staleSeconds("600")).toBe(600);
  });
});
