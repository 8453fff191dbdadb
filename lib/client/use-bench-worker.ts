"use client";

import { proxy, releaseProxy, transfer, wrap, type Endpoint, type Remote } from "comlink";
import { useEffect, useState } from "react";
import type { PercentileOptions, BenchOpenArgs, BenchView, BenchWorkerApi, CorrectionArgs, CorrectionInfo, CustomTableRef, RawValue, RegionOptions, RegionRef, RegionResult, TraceRequest, TraceResult } from "@/workers/bench-api";
import type { DrawingApi, SurfaceCanvas, SurfaceRender } from "@/workers/bench-surface";

/** What the worker speaks: the pixel API plus drawing into a transferred canvas. */
type WorkerApi = DrawingApi<BenchWorkerApi>;

/**
 * Where the frames for a canvas are drawn: "worker" (the canvas was transferred to the running
 * worker, which draws every render into it), "main" (this browser cannot transfer a canvas, or the
 * worker could not draw: the main thread draws the returned pixels), or "lost" (the canvas went to
 * a worker that has stopped since, e.g. React StrictMode's second effect run in development, or
 * the worker could not take it): a canvas can be transferred only once, so a new element is needed.
 */
export type CanvasSurface = "worker" | "main" | "lost";

/** A worker failure, with what the bench was doing in the message; the worker's error is `cause`. */
export class BenchWorkerError extends Error {
  override name = "BenchWorkerError";
}

/** The worker, or anything that speaks to one (a MessagePort in tests). */
export type BenchEndpoint = Endpoint & { terminate?(): void };

function startWorker(): BenchEndpoint {
  // This exact form lets Turbopack and webpack find and bundle the worker (PLATFORM.md, "Workers").
  return new Worker(new URL("../../workers/bench.worker.ts", import.meta.url), { type: "module" });
}

function abortReason(signal: AbortSignal): Error {
  return signal.reason instanceof Error ? signal.reason : new DOMException("Aborted", "AbortError");
}

const isAbort = (e: unknown) => e instanceof Error && e.name === "AbortError";

interface Pending {
  reject(e: Error): void;
}

/**
 * Owns one bench worker: starts it on first use, stops it on `terminate()`, and turns AbortSignals
 * into request ids. Cancellation choice: an AbortSignal cannot be posted, so every call carries an
 * id and aborting posts `cancel(id)`; the promise here rejects at once with AbortError, without
 * waiting for the worker to notice. A request id keeps the worker side plain (no custom comlink
 * transfer handler that would have to proxy an event target through a MessagePort per call).
 */
export class BenchWorkerClient {
  private endpoint: BenchEndpoint | null = null;
  private remote: Remote<WorkerApi> | null = null;
  /** Counts started workers: a canvas belongs to the worker it was transferred to. */
  private connection = 0;
  private readonly canvases = new WeakMap<HTMLCanvasElement, { connection: number; failed: boolean }>();
  /** Set once the worker refused a canvas: later canvases stay on the main thread. */
  private offscreenFailed = false;
  private nextId = 0;
  private readonly pending = new Set<Pending>();
  private lastRender: AbortController | null = null;
  private lastPrefetch: AbortController | null = null;
  private lastCorrection: AbortController | null = null;
  /**
   * What the running worker was told to hold: the open dataset, the lab's colour tables and the
   * flat/dark correction. A worker started again after `terminate()` (unmount and remount, a
   * development hot reload) is told the same before any other call, so the bench's "opened" state
   * still holds for it.
   */
  private held: { open: BenchOpenArgs | null; tables: Map<string, CustomTableRef>; correction: CorrectionArgs | null } = { open: null, tables: new Map(), correction: null };
  /** The replay of `held` into a restarted worker; calls wait for it. */
  private restoring: Promise<unknown> | null = null;

  constructor(private readonly create: () => BenchEndpoint = startWorker) {}

  private connect(): Remote<WorkerApi> {
    if (this.remote) return this.remote;
    const endpoint = this.create();
    const restarted = this.connection > 0;
    this.connection++;
    // A worker script that fails to load or throws at top level answers nothing: fail the waiters.
    endpoint.addEventListener("error", ((event: Event) => {
      const detail = (event as { message?: unknown }).message;
      const message = typeof detail === "string" && detail ? detail : "the worker failed to start or crashed";
      this.failAll(new BenchWorkerError(`The bench worker stopped: ${message}`));
    }) as EventListener);
    this.endpoint = endpoint;
    const remote = wrap<WorkerApi>(endpoint);
    this.remote = remote;
    this.restoring = restarted ? this.restore(remote) : null;
    return remote;
  }

  /** Tells a restarted worker what the one before held (see `held`). */
  private async restore(remote: Remote<WorkerApi>): Promise<void> {
    const { open, tables, correction } = this.held;
    if (tables.size > 0) await remote.registerTables([...tables.values()]);
    if (!open) return;
    await remote.open(open, ++this.nextId);
    if (correction) await remote.setCorrection(correction, ++this.nextId);
  }

  private failAll(error: Error): void {
    for (const p of [...this.pending]) p.reject(error);
  }

  /** Stops the worker; calls still waiting reject with AbortError. A later call starts a new worker. */
  terminate(): void {
    this.lastRender?.abort();
    this.lastPrefetch?.abort();
    this.lastCorrection?.abort();
    this.failAll(new DOMException("The bench worker was stopped", "AbortError"));
    this.remote?.[releaseProxy]();
    this.endpoint?.terminate?.();
    this.remote = null;
    this.endpoint = null;
    this.restoring = null;
  }

  private call<T>(what: string, signal: AbortSignal | undefined, run: (remote: Remote<WorkerApi>, id: number) => Promise<T>): Promise<T> {
    if (signal?.aborted) return Promise.reject(abortReason(signal));
    const remote = this.connect();
    const id = ++this.nextId;
    return new Promise<T>((resolve, reject) => {
      const settle = () => {
        this.pending.delete(entry);
        signal?.removeEventListener("abort", onAbort);
      };
      const entry: Pending = {
        reject(e) {
          settle();
          reject(e);
        },
      };
      this.pending.add(entry);
      const onAbort = () => {
        settle();
        // Fire and forget: the worker may already have finished this request.
        remote.cancel(id).catch(() => undefined);
        reject(abortReason(signal as AbortSignal));
      };
      signal?.addEventListener("abort", onAbort, { once: true });
      const restored = this.restoring ?? Promise.resolve();
      restored.then(() => run(remote, id)).then(
        (value) => {
          settle();
          resolve(value);
        },
        (e: unknown) => {
          settle();
          if (isAbort(e)) reject(e as Error);
          else reject(new BenchWorkerError(`while ${what}: ${e instanceof Error ? e.message : String(e)}`, { cause: e }));
        },
      );
    });
  }

  open(args: BenchOpenArgs, signal?: AbortSignal) {
    this.lastRender?.abort();
    this.lastPrefetch?.abort();
    this.lastCorrection?.abort();
    this.held.open = null;
    this.held.correction = null;
    return this.call(`opening dataset ${args.datasetId}`, signal, async (r, id) => {
      const opened = await r.open(args, id);
      this.held.open = args;
      return opened;
    });
  }

  /**
   * Renders a view; a newer render aborts the one before (scrubbing). The newer request is posted
   * before the older is cancelled, so a plane both need keeps loading instead of starting over.
   */
  render(view: BenchView, signal?: AbortSignal): Promise<SurfaceRender> {
    const previous = this.lastRender;
    const own = new AbortController();
    this.lastRender = own;
    const combined = signal ? AbortSignal.any([signal, own.signal]) : own.signal;
    const result = this.call(`rendering z ${view.z}, t ${view.t}`, combined, (r, id) => r.renderView(view, id));
    previous?.abort(new DOMException("Superseded by a newer view", "AbortError"));
    return result;
  }

  /**
   * Decides where this canvas's frames are drawn (see CanvasSurface). The first call for a canvas
   * transfers it to the worker where the browser allows (HTMLCanvasElement.transferControlToOffscreen);
   * messages on one port arrive in order, so a render asked for next is drawn into it.
   */
  surfaceFor(canvas: HTMLCanvasElement): CanvasSurface {
    const known = this.canvases.get(canvas);
    if (known) return !known.failed && known.connection === this.connection && this.remote ? "worker" : "lost";
    if (this.offscreenFailed || typeof canvas.transferControlToOffscreen !== "function") return "main";
    const remote = this.connect();
    let offscreen: OffscreenCanvas;
    try {
      offscreen = canvas.transferControlToOffscreen();
    } catch {
      // E.g. the canvas already has a 2D context here: it stays on the main thread.
      this.offscreenFailed = true;
      return "main";
    }
    const entry = { connection: this.connection, failed: false };
    this.canvases.set(canvas, entry);
    remote.attachCanvas(transfer(offscreen as unknown as SurfaceCanvas, [offscreen])).catch(() => {
      entry.failed = true;
      this.offscreenFailed = true;
    });
    return "worker";
  }

  /** RGBA bytes of a rectangle of the worker's canvas (what is on screen, at plane resolution). */
  readCanvas(x: number, y: number, width: number, height: number): Promise<Uint8ClampedArray> {
    return this.call("reading the drawn plane back", undefined, (r) => r.readCanvas(x, y, width, height));
  }

  readValues(z: number, t: number, x: number, y: number, signal?: AbortSignal): Promise<RawValue[]> {
    return this.call(`reading pixel (${x}, ${y}) at z ${z}, t ${t}`, signal, (r, id) => r.readValues(z, t, x, y, id));
  }

  /** Loads the planes of these time points ahead of playback; a newer prefetch supersedes the older. */
  prefetch(z: number, ts: readonly number[], options: { channels?: readonly number[]; signal?: AbortSignal } = {}) {
    const previous = this.lastPrefetch;
    const own = new AbortController();
    this.lastPrefetch = own;
    const combined = options.signal ? AbortSignal.any([options.signal, own.signal]) : own.signal;
    const result = this.call(`prefetching z ${z}, t ${ts.join(", ")}`, combined, (r, id) => r.prefetch(z, [...ts], id, options.channels && [...options.channels]));
    previous?.abort(new DOMException("Superseded by a newer prefetch", "AbortError"));
    return result;
  }

  /**
   * Exact percentiles of one plane; of the corrected values whenever a correction is set, unless
   * `options.corrected` is false (raw) — pass the view's `correction` flag to match what is shown.
   */
  percentiles(z: number, t: number, c: number, ps: readonly number[], signal?: AbortSignal, options?: PercentileOptions): Promise<number[]> {
    return this.call(`computing percentiles of channel ${c} at z ${z}, t ${t}`, signal, (r, id) => r.percentiles(z, t, c, [...ps], id, options && { ...options }));
  }

  /**
   * Sets the flat-field and dark frames for the open dataset (null turns correction off). A newer
   * call supersedes an older one still loading its frames.
   */
  setCorrection(args: CorrectionArgs | null, signal?: AbortSignal): Promise<CorrectionInfo | null> {
    const previous = this.lastCorrection;
    const own = new AbortController();
    this.lastCorrection = own;
    const combined = signal ? AbortSignal.any([signal, own.signal]) : own.signal;
    const what = args ? "loading the flat-field and dark frames" : "turning flat/dark correction off";
    const result = this.call(what, combined, async (r, id) => {
      const info = await r.setCorrection(args, id);
      this.held.correction = args;
      return info;
    });
    previous?.abort(new DOMException("Superseded by a newer correction", "AbortError"));
    return result;
  }

  /** Region statistics and line profiles on one plane (regions panel). */
  regionStats(z: number, t: number, regions: RegionRef[], signal?: AbortSignal, options?: RegionOptions): Promise<RegionResult[]> {
    return this.call(`measuring regions at z ${z}, t ${t}`, signal, (r, id) => r.regionStats(z, t, regions, id, options));
  }

  /**
   * A region's trace over every plane along t or z; `onProgress(done, total)` is called from the
   * worker through a comlink proxy. Aborting the signal cancels the trace in the worker.
   */
  trace(request: TraceRequest, options: { signal?: AbortSignal; onProgress?: (done: number, total: number) => void } = {}): Promise<TraceResult> {
    const progress = options.onProgress ? proxy(options.onProgress) : undefined;
    return this.call(`tracing a region over ${request.axis}`, options.signal, (r, id) => r.trace(request, id, progress));
  }

  close(): Promise<void> {
    this.held.open = null;
    this.held.correction = null;
    return this.call("closing the dataset", undefined, (r) => r.close());
  }

  /** Makes a lab's own colour tables ("custom-<id>") known to the worker; a known id is replaced. */
  registerTables(tables: CustomTableRef[]): Promise<number> {
    return this.call("registering custom colour tables", undefined, async (r) => {
      const count = await r.registerTables(tables);
      for (const t of tables) this.held.tables.set(t.id, t);
      return count;
    });
  }
}

/**
 * The bench worker for one component's lifetime: started on first use (never during server
 * rendering), terminated on unmount. The returned object is stable across renders.
 */
export function useBenchWorker(): BenchWorkerClient {
  const [client] = useState(() => new BenchWorkerClient());
  useEffect(() => () => client.terminate(), [client]);
  return client;
}
