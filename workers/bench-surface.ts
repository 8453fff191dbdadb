// Drawing in the worker. Where the browser can hand a canvas to a worker (HTMLCanvasElement
// .transferControlToOffscreen), the bench transfers the viewport's canvas once and every render is
// drawn here, into that OffscreenCanvas, at plane resolution (zoom and pan are CSS transforms of the
// placeholder on the main thread). The main thread then only composes UI around it. Without a
// canvas the renders are returned as before and the main thread draws them (ImageData fallback).
//
// Kept apart from bench-api.ts so that stays plain pixel code; the canvas is an interface here, so
// Node tests drive this with a fake.
import type { BenchRender, BenchView, BenchWorkerApi } from "./bench-api";

/** The parts of an OffscreenCanvas 2D context used here. */
export interface SurfaceContext {
  putImageData(image: ImageData, dx: number, dy: number): void;
  getImageData(sx: number, sy: number, sw: number, sh: number): ImageData;
}

/** The parts of an OffscreenCanvas used here. */
export interface SurfaceCanvas {
  width: number;
  height: number;
  getContext(kind: "2d"): SurfaceContext | null;
}

export interface BenchSurfaceApi {
  /**
   * Takes the viewport's canvas (transferred, so it lives here from now on); a later call replaces
   * it (a new canvas element after a resize or a restarted worker). Throws when the worker cannot
   * draw into it, and the main thread keeps drawing.
   */
  attachCanvas(canvas: SurfaceCanvas): void;
  /** Forgets the canvas: renders go back to the main thread only. */
  detachCanvas(): void;
  /**
   * RGBA bytes of a rectangle of what is on the worker's canvas now (a transferred canvas has no
   * 2D context on the main thread): for tests and anything that reads the picture back.
   */
  readCanvas(x: number, y: number, width: number, height: number): Uint8ClampedArray;
}

/** A render drawn into the worker's canvas says so; the main thread then draws nothing. */
export type SurfaceRender = BenchRender & { drawn?: boolean };

/** The worker API with drawing: renders say whether they were drawn into the canvas. */
export type DrawingApi<A extends BenchWorkerApi = BenchWorkerApi> = Omit<A, "renderView"> &
  BenchSurfaceApi & { renderView(view: BenchView, requestId?: number): Promise<SurfaceRender> };

export type MakeImageData = (rgba: Uint8ClampedArray, width: number, height: number) => ImageData;

const defaultImageData: MakeImageData = (rgba, width, height) => new ImageData(new Uint8ClampedArray(rgba.buffer as ArrayBuffer, rgba.byteOffset, rgba.byteLength), width, height);

/**
 * Wraps the worker API so that, once a canvas is attached, each render is drawn into it before it
 * is returned (with `drawn: true`). Request ids grow with every call from the client, so a render
 * finishing after a newer one was drawn (it lost a race with its own cancel) is not drawn over it.
 * The pixels are still returned (moved, not copied): the figure export composes from them.
 */
export function drawingRenders<A extends BenchWorkerApi>(api: A, makeImageData: MakeImageData = defaultImageData): DrawingApi<A> {
  let canvas: SurfaceCanvas | null = null;
  let ctx: SurfaceContext | null = null;
  let lastDrawn = -Infinity;

  function draw(r: BenchRender, requestId: number | undefined): boolean {
    if (!canvas || !ctx) return false;
    const order = requestId ?? Infinity;
    if (order < lastDrawn) return false;
    lastDrawn = order;
    // Resizing clears the canvas, so only when the plane size changes.
    if (canvas.width !== r.width) canvas.width = r.width;
    if (canvas.height !== r.height) canvas.height = r.height;
    // putImageData writes the bytes as they are (no blending, no smoothing), like the main-thread path.
    ctx.putImageData(makeImageData(r.rgba, r.width, r.height), 0, 0);
    return true;
  }

  return {
    ...api,
    async renderView(view: BenchView, requestId?: number): Promise<SurfaceRender> {
      const r = await api.renderView(view, requestId);
      return draw(r, requestId) ? { ...r, drawn: true } : r;
    },
    attachCanvas(next) {
      const context = next.getContext("2d");
      if (!context) throw new Error("This browser cannot draw into a canvas inside a worker (no 2D context)");
      canvas = next;
      ctx = context;
      lastDrawn = -Infinity;
    },
    detachCanvas() {
      canvas = null;
      ctx = null;
    },
    readCanvas(x, y, width, height) {
      if (!ctx) throw new Error("No canvas is attached to the bench worker");
      return ctx.getImageData(x, y, width, height).data;
    },
  };
}
