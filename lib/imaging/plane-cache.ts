// Decoded planes kept in memory, least recently used dropped first, within a byte budget, so that
// scrubbing back over z or replaying t does not read and decode the same plane again.

export interface PlaneKey {
  datasetId: number | string;
  /** Position of the plane's IFD in the file (the plane index's `ifdIndex`). */
  ifdIndex: number;
}

export type PlaneLoader<V> = (signal: AbortSignal) => Promise<V>;

export interface PlaneCacheOptions<V> {
  /** Most bytes held by cached values together. */
  budgetBytes: number;
  /** Bytes one value holds (its typed arrays). */
  sizeOf: (value: V) => number;
}

export interface PlaneCacheCounters {
  /** Requests answered from memory. */
  hits: number;
  /** Requests that joined a load already running for the same plane. */
  joined: number;
  /** Loads started (decodes). */
  loads: number;
  evictions: number;
}

interface InFlight<V> {
  promise: Promise<V>;
  controller: AbortController;
  /** Callers still waiting; when the last one gives up, the load itself is aborted. */
  waiters: number;
  /** Set by clear(): the result belongs to a dataset no longer open and must not be kept. */
  discard: boolean;
}

function abortError(signal: AbortSignal): Error {
  return signal.reason instanceof Error ? signal.reason : new DOMException("Aborted", "AbortError");
}

export class PlaneCache<V> {
  readonly budgetBytes: number;
  private readonly sizeOf: (value: V) => number;
  // Map iteration order is insertion order: the first entry is the least recently used.
  private readonly entries = new Map<string, { value: V; bytes: number }>();
  private readonly inFlight = new Map<string, InFlight<V>>();
  private held = 0;
  readonly counters: PlaneCacheCounters = { hits: 0, joined: 0, loads: 0, evictions: 0 };

  constructor(options: PlaneCacheOptions<V>) {
    if (!(options.budgetBytes >= 0)) throw new RangeError(`budgetBytes must be ≥ 0, got ${options.budgetBytes}`);
    this.budgetBytes = options.budgetBytes;
    this.sizeOf = options.sizeOf;
  }

  static key({ datasetId, ifdIndex }: PlaneKey): string {
    return `${datasetId}:${ifdIndex}`;
  }

  /** Bytes held by cached values. */
  get bytes(): number {
    return this.held;
  }

  /** Number of cached planes. */
  get size(): number {
    return this.entries.size;
  }

  has(key: PlaneKey): boolean {
    return this.entries.has(PlaneCache.key(key));
  }

  /** The cached value without loading, and without counting as a use. */
  peek(key: PlaneKey): V | undefined {
    return this.entries.get(PlaneCache.key(key))?.value;
  }

  /**
   * The plane from memory, or from `load` (run once however many callers ask at the same time).
   * Aborting `signal` rejects this caller only; the load is aborted when every caller has given
   * up, and an aborted or failed load leaves nothing behind, so the next request loads afresh.
   */
  get(key: PlaneKey, load: PlaneLoader<V>, signal?: AbortSignal): Promise<V> {
    if (signal?.aborted) return Promise.reject(abortError(signal));
    const k = PlaneCache.key(key);
    const hit = this.entries.get(k);
    if (hit) {
      this.counters.hits++;
      this.entries.delete(k);
      this.entries.set(k, hit);
      return Promise.resolve(hit.value);
    }
    let flight = this.inFlight.get(k);
    if (flight) this.counters.joined++;
    else flight = this.startLoad(k, load);
    return this.wait(k, flight, signal);
  }

  private startLoad(k: string, load: PlaneLoader<V>): InFlight<V> {
    this.counters.loads++;
    const controller = new AbortController();
    const flight: InFlight<V> = { controller, waiters: 0, discard: false, promise: Promise.resolve() as Promise<never> };
    flight.promise = (async () => {
      try {
        const value = await load(controller.signal);
        // A loader that finished despite its last waiter leaving still produced a correct plane.
        if (!flight.discard) this.insert(k, value);
        return value;
      } finally {
        if (this.inFlight.get(k) === flight) this.inFlight.delete(k);
      }
    })();
    // Nobody may be waiting when it fails (all aborted); the rejection is handled by each waiter.
    flight.promise.catch(() => undefined);
    this.inFlight.set(k, flight);
    return flight;
  }

  private wait(k: string, flight: InFlight<V>, signal?: AbortSignal): Promise<V> {
    flight.waiters++;
    if (!signal) return flight.promise;
    return new Promise<V>((resolve, reject) => {
      let left = false;
      const onAbort = () => {
        left = true;
        reject(abortError(signal));
        if (--flight.waiters === 0 && this.inFlight.get(k) === flight) {
          // Forget the load at once, so a request arriving now starts a fresh one instead of
          // joining a load that is about to reject with AbortError.
          this.inFlight.delete(k);
          flight.controller.abort(abortError(signal));
        }
      };
      signal.addEventListener("abort", onAbort, { once: true });
      flight.promise.then(
        (v) => {
          signal.removeEventListener("abort", onAbort);
          if (!left) resolve(v);
        },
        (e) => {
          signal.removeEventListener("abort", onAbort);
          if (!left) reject(e);
        },
      );
    });
  }

  private insert(k: string, value: V): void {
    const bytes = this.sizeOf(value);
    // A plane larger than the whole budget would evict everything and still not fit.
    if (bytes > this.budgetBytes) return;
    const old = this.entries.get(k);
    if (old) {
      this.held -= old.bytes;
      this.entries.delete(k);
    }
    this.entries.set(k, { value, bytes });
    this.held += bytes;
    for (const [oldest, entry] of this.entries) {
      if (this.held <= this.budgetBytes) break;
      this.entries.delete(oldest);
      this.held -= entry.bytes;
      this.counters.evictions++;
    }
  }

  delete(key: PlaneKey): boolean {
    const k = PlaneCache.key(key);
    const entry = this.entries.get(k);
    if (!entry) return false;
    this.entries.delete(k);
    this.held -= entry.bytes;
    return true;
  }

  /** Drops every cached plane (of one dataset when given) and aborts loads nobody needs any more. */
  clear(datasetId?: number | string): void {
    const prefix = datasetId === undefined ? null : `${datasetId}:`;
    for (const [k, entry] of this.entries) {
      if (prefix !== null && !k.startsWith(prefix)) continue;
      this.entries.delete(k);
      this.held -= entry.bytes;
    }
    for (const [k, flight] of this.inFlight) {
      if (prefix !== null && !k.startsWith(prefix)) continue;
      this.inFlight.delete(k);
      flight.discard = true;
      flight.controller.abort(new DOMException("Plane cache cleared", "AbortError"));
    }
  }
}
