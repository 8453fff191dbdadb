import { describe, expect, test } from "vitest";
import { PlaneCache } from "@/lib/imaging/plane-cache";

interface Plane {
  data: Uint16Array;
}

// 50 pixels × 2 bytes = 100 bytes per plane, so budgets below are counted in planes of 100 bytes.
const plane = (value: number, pixels = 50): Plane => ({ data: new Uint16Array(pixels).fill(value) });
const cache = (budgetBytes: number) => new PlaneCache<Plane>({ budgetBytes, sizeOf: (p) => p.data.byteLength });

function deferred<T>() {
  let resolve!: (v: T) => void;
  let reject!: (e: unknown) => void;
  const promise = new Promise<T>((res, rej) => ((resolve = res), (reject = rej)));
  return { promise, resolve, reject };
}

/** A loader that records each call and the signal it got, resolved by the test. */
function controlledLoader() {
  const calls: { signal: AbortSignal; result: ReturnType<typeof deferred<Plane>> }[] = [];
  const load = (signal: AbortSignal) => {
    const result = deferred<Plane>();
    calls.push({ signal, result });
    // A real decode rejects when its reads are aborted.
    signal.addEventListener("abort", () => result.reject(signal.reason));
    return result.promise;
  };
  return { calls, load };
}

const key = (ifdIndex: number, datasetId = 1) => ({ datasetId, ifdIndex });

describe("PlaneCache", () => {
  test("loads a plane once and answers the next request from memory", async () => {
    const c = cache(1000);
    let loads = 0;
    const load = async () => (loads++, plane(7));
    const first = await c.get(key(0), load);
    const second = await c.get(key(0), load);
    expect(second).toBe(first);
    expect(loads).toBe(1);
    expect(c.counters).toMatchObject({ hits: 1, loads: 1 });
    expect(c.bytes).toBe(100);
  });

  test("the same IFD index in two datasets is two planes", async () => {
    const c = cache(1000);
    await c.get(key(3, 1), async () => plane(1));
    const other = await c.get(key(3, 2), async () => plane(2));
    expect(other.data[0]).toBe(2);
    expect(c.size).toBe(2);
  });

  test("evicts the least recently used plane when the budget is exceeded", async () => {
    const c = cache(300);
    for (const i of [0, 1, 2]) await c.get(key(i), async () => plane(i));
    // Using plane 0 makes plane 1 the least recently used.
    await c.get(key(0), async () => plane(99));
    await c.get(key(3), async () => plane(3));
    expect([0, 1, 2, 3].map((i) => c.has(key(i)))).toEqual([true, false, true, true]);
    expect(c.bytes).toBe(300);
    expect(c.counters.evictions).toBe(1);
  });

  test("returns but does not cache a plane larger than the whole budget, and keeps the others", async () => {
    const c = cache(250);
    await c.get(key(0), async () => plane(0));
    const big = await c.get(key(1), async () => plane(1, 200));
    expect(big.data.length).toBe(200);
    expect(c.has(key(1))).toBe(false);
    expect(c.has(key(0))).toBe(true);
    expect(c.bytes).toBe(100);
  });

  test("two requests for the same plane at once share one load", async () => {
    const c = cache(1000);
    const { calls, load } = controlledLoader();
    const a = c.get(key(5), load);
    const b = c.get(key(5), load);
    expect(calls).toHaveLength(1);
    calls[0].result.resolve(plane(5));
    expect(await a).toBe(await b);
    expect(c.counters).toMatchObject({ loads: 1, joined: 1 });
  });

  test("one caller aborting leaves the shared load running for the other", async () => {
    const c = cache(1000);
    const { calls, load } = controlledLoader();
    const stale = new AbortController();
    const a = c.get(key(5), load, stale.signal);
    const b = c.get(key(5), load, new AbortController().signal);
    stale.abort();
    await expect(a).rejects.toMatchObject({ name: "AbortError" });
    expect(calls[0].signal.aborted).toBe(false);
    calls[0].result.resolve(plane(5));
    expect((await b).data[0]).toBe(5);
    expect(c.has(key(5))).toBe(true);
  });

  test("when the only caller aborts, the load is aborted, nothing is cached and the next request loads afresh", async () => {
    const c = cache(1000);
    const { calls, load } = controlledLoader();
    const stale = new AbortController();
    const a = c.get(key(5), load, stale.signal);
    stale.abort();
    await expect(a).rejects.toMatchObject({ name: "AbortError" });
    expect(calls[0].signal.aborted).toBe(true);
    expect(c.has(key(5))).toBe(false);

    const again = c.get(key(5), load);
    expect(calls).toHaveLength(2);
    calls[1].result.resolve(plane(8));
    expect((await again).data[0]).toBe(8);
    expect(c.has(key(5))).toBe(true);
  });

  test("a request with an already aborted signal starts no load", async () => {
    const c = cache(1000);
    const { calls, load } = controlledLoader();
    await expect(c.get(key(1), load, AbortSignal.abort())).rejects.toMatchObject({ name: "AbortError" });
    expect(calls).toHaveLength(0);
  });

  test("a failed load is not cached; the next request tries again", async () => {
    const c = cache(1000);
    await expect(c.get(key(2), async () => Promise.reject(new Error("damaged strip")))).rejects.toThrow("damaged strip");
    expect((await c.get(key(2), async () => plane(2))).data[0]).toBe(2);
  });

  test("clear(datasetId) drops that dataset's planes only and discards its running loads", async () => {
    const c = cache(1000);
    await c.get(key(0, 1), async () => plane(1));
    await c.get(key(0, 2), async () => plane(2));
    const { calls, load } = controlledLoader();
    const running = c.get(key(1, 1), load);
    c.clear(1);
    await expect(running).rejects.toMatchObject({ name: "AbortError" });
    expect(c.has(key(0, 1))).toBe(false);
    expect(c.has(key(1, 1))).toBe(false);
    expect(c.has(key(0, 2))).toBe(true);
    expect(c.bytes).toBe(100);
    expect(calls[0].signal.aborted).toBe(true);
  });
});
