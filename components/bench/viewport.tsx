"use client";

import { forwardRef, useCallback, useEffect, useImperativeHandle, useRef, useState, type ReactNode } from "react";

/** A point in image pixels (not screen pixels): kept apart so zoom cannot mix the two spaces. */
export interface ImagePoint {
  x: number;
  y: number;
}

/** Zoom (screen pixels per image pixel) and the image point at the centre of the viewport: saved with a view. */
export interface Camera {
  zoom: number;
  pan: ImagePoint;
}

/**
 * The plane's canvas element. `readPixels` reads back what is drawn on it, wherever it is drawn: a
 * canvas transferred to the bench worker has no 2D context on the main thread, so tests and tools
 * read through this instead of getContext("2d").getImageData.
 */
export type PlaneCanvas = HTMLCanvasElement & { readPixels?: (x: number, y: number, width: number, height: number) => Promise<Uint8ClampedArray> };

export interface ViewportHandle {
  /** Shows a frame: draws it here, or (`drawn`) only counts it when the worker drew it into the transferred canvas. */
  draw(frame: { width: number; height: number; rgba: Uint8ClampedArray; drawn?: boolean }): void;
  zoomBy(factor: number): void;
  fit(): void;
  oneToOne(): void;
  /** The part of the image on screen, in image pixels (for Fit over the visible area). */
  visibleRect(): { x: number; y: number; width: number; height: number };
  /** Moves to a saved camera (clamped to the zoom limits); later resizes keep its centre. */
  setCamera(camera: Camera): void;
}

interface Props {
  width: number;
  height: number;
  /** Micrometres per pixel, for the scale bar; null hides it. */
  pixelSizeUm: number | null;
  onPointer: (point: ImagePoint | null) => void;
  /** Told after every zoom or pan, so the bench can save the camera with the view. */
  onCameraChange?: (camera: Camera) => void;
  /**
   * Drawn over the image in the viewport's box (e.g. the regions' SVG), given the current transform:
   * screen = image · scale + (x, y), in CSS pixels relative to the box.
   */
  overlay?: (view: { scale: number; x: number; y: number }) => ReactNode;
  /** Told the canvas element (null when it goes), so the bench can hand it to the worker. */
  onCanvas?: (canvas: PlaneCanvas | null) => void;
  /**
   * A new value puts a new canvas element in place: a canvas can be transferred to a worker only
   * once, so a worker that stopped takes its canvas with it. A new plane size also makes a new one.
   */
  canvasKey?: number;
  /** Reads back a rectangle of a canvas the worker draws into (PlaneCanvas.readPixels). */
  readBack?: (x: number, y: number, width: number, height: number) => Promise<Uint8ClampedArray>;
}

const MAX_SCALE = 32;

/** A length of 1, 2 or 5 × 10^k µm that draws between about 60 and 150 screen pixels. */
export function niceScaleBar(umPerScreenPx: number): { um: number; px: number } {
  const target = 100 * umPerScreenPx;
  const exponent = Math.floor(Math.log10(target));
  const candidates = [1, 2, 5, 10].map((m) => m * 10 ** exponent);
  const um = candidates.reduce((best, c) => (Math.abs(c / umPerScreenPx - 100) < Math.abs(best / umPerScreenPx - 100) ? c : best));
  return { um, px: um / umPerScreenPx };
}

const MIN_SCALE = 0.05;

export const Viewport = forwardRef<ViewportHandle, Props>(function Viewport({ width, height, pixelSizeUm, onPointer, onCameraChange, overlay, onCanvas, canvasKey = 0, readBack }, ref) {
  const box = useRef<HTMLDivElement>(null);
  const canvas = useRef<PlaneCanvas | null>(null);
  const onCanvasRef = useRef(onCanvas);
  const readBackRef = useRef(readBack);
  // Whether the last frame on this element was drawn by the worker (the element is then a placeholder).
  const drawnInWorker = useRef(false);
  useEffect(() => {
    onCanvasRef.current = onCanvas;
    readBackRef.current = readBack;
  }, [onCanvas, readBack]);
  const setCanvas = useCallback((element: PlaneCanvas | null) => {
    canvas.current = element;
    drawnInWorker.current = false;
    if (element) {
      element.readPixels = async (x, y, w, h) => {
        if (drawnInWorker.current) {
          if (!readBackRef.current) throw new Error("This canvas is drawn by the worker and nothing reads it back");
          return readBackRef.current(x, y, w, h);
        }
        const ctx = element.getContext("2d");
        if (!ctx) throw new Error("No 2D context on the plane canvas");
        return ctx.getImageData(x, y, w, h).data;
      };
    }
    onCanvasRef.current?.(element);
  }, []);
  const [view, setView] = useState({ scale: 1, x: 0, y: 0 });
  const drag = useRef<{ x: number; y: number; vx: number; vy: number } | null>(null);
  // Until the person zooms or pans (or a saved camera is restored), a resize fits the image again;
  // afterwards a resize keeps the image point at the centre where it was.
  const placed = useRef(false);
  const onCamera = useRef(onCameraChange);
  useEffect(() => {
    onCamera.current = onCameraChange;
  }, [onCameraChange]);

  const fitView = useCallback(() => {
    const rect = box.current?.getBoundingClientRect();
    if (!rect || !rect.width) return;
    placed.current = false;
    const scale = Math.min(MAX_SCALE, rect.width / width, rect.height / height);
    setView({ scale, x: (rect.width - width * scale) / 2, y: (rect.height - height * scale) / 2 });
  }, [width, height]);

  const placeCamera = useCallback((camera: Camera) => {
    const rect = box.current?.getBoundingClientRect();
    if (!rect || !rect.width) return;
    placed.current = true;
    const scale = Math.min(MAX_SCALE, Math.max(MIN_SCALE, camera.zoom));
    setView({ scale, x: rect.width / 2 - camera.pan.x * scale, y: rect.height / 2 - camera.pan.y * scale });
  }, []);

  useEffect(() => {
    const rect = box.current?.getBoundingClientRect();
    if (!rect || !rect.width) return;
    onCamera.current?.({ zoom: view.scale, pan: { x: (rect.width / 2 - view.x) / view.scale, y: (rect.height / 2 - view.y) / view.scale } });
  }, [view]);

  const zoomAt = useCallback((factor: number, cx?: number, cy?: number) => {
    placed.current = true;
    setView((v) => {
      const rect = box.current?.getBoundingClientRect();
      const px = cx ?? (rect ? rect.width / 2 : 0);
      const py = cy ?? (rect ? rect.height / 2 : 0);
      const scale = Math.min(MAX_SCALE, Math.max(MIN_SCALE, v.scale * factor));
      const k = scale / v.scale;
      return { scale, x: px - (px - v.x) * k, y: py - (py - v.y) * k };
    });
  }, []);

  useImperativeHandle(
    ref,
    () => ({
      draw(frame) {
        const element = canvas.current;
        if (!element) return;
        // Counts drawn frames, so playback speed can be measured from outside (tests/bench/browser.ts).
        const count = () => (element.dataset.frames = String(Number(element.dataset.frames ?? 0) + 1));
        drawnInWorker.current = Boolean(frame.drawn);
        if (frame.drawn) {
          count();
          return;
        }
        // The fallback: the main thread draws the worker's pixels.
        const ctx = element.getContext("2d");
        if (!ctx) return;
        count();
        ctx.putImageData(new ImageData(new Uint8ClampedArray(frame.rgba.buffer as ArrayBuffer, frame.rgba.byteOffset, frame.rgba.byteLength), frame.width, frame.height), 0, 0);
      },
      zoomBy: (factor) => zoomAt(factor),
      visibleRect() {
        const rect = box.current?.getBoundingClientRect();
        if (!rect) return { x: 0, y: 0, width, height };
        const x0 = Math.max(0, Math.floor(-view.x / view.scale));
        const y0 = Math.max(0, Math.floor(-view.y / view.scale));
        const x1 = Math.min(width, Math.ceil((rect.width - view.x) / view.scale));
        const y1 = Math.min(height, Math.ceil((rect.height - view.y) / view.scale));
        return { x: x0, y: y0, width: Math.max(1, x1 - x0), height: Math.max(1, y1 - y0) };
      },
      fit: fitView,
      setCamera: placeCamera,
      oneToOne: () => {
        const rect = box.current?.getBoundingClientRect();
        if (!rect) return;
        placed.current = true;
        setView({ scale: 1, x: (rect.width - width) / 2, y: (rect.height - height) / 2 });
      },
    }),
    [fitView, zoomAt, placeCamera, width, height, view],
  );

  useEffect(() => {
    fitView();
    let last = box.current?.getBoundingClientRect();
    const observer = new ResizeObserver(() => {
      const rect = box.current?.getBoundingClientRect();
      if (!placed.current || !rect || !last) fitView();
      else {
        // Keep the centre: shift by half the change in size.
        const dx = (rect.width - last.width) / 2;
        const dy = (rect.height - last.height) / 2;
        setView((v) => ({ ...v, x: v.x + dx, y: v.y + dy }));
      }
      last = rect;
    });
    if (box.current) observer.observe(box.current);
    return () => observer.disconnect();
  }, [fitView]);

  const toImage = (clientX: number, clientY: number): ImagePoint | null => {
    const rect = box.current!.getBoundingClientRect();
    const x = Math.floor((clientX - rect.left - view.x) / view.scale);
    const y = Math.floor((clientY - rect.top - view.y) / view.scale);
    return x >= 0 && y >= 0 && x < width && y < height ? { x, y } : null;
  };

  const bar = pixelSizeUm ? niceScaleBar(pixelSizeUm / view.scale) : null;

  return (
    <div
      ref={box}
      className="absolute inset-0 cursor-grab overflow-hidden active:cursor-grabbing"
      onWheel={(e) => {
        const rect = box.current!.getBoundingClientRect();
        zoomAt(e.deltaY < 0 ? 1.25 : 0.8, e.clientX - rect.left, e.clientY - rect.top);
      }}
      onPointerDown={(e) => {
        drag.current = { x: e.clientX, y: e.clientY, vx: view.x, vy: view.y };
        placed.current = true;
        (e.target as Element).setPointerCapture?.(e.pointerId);
      }}
      onPointerUp={() => (drag.current = null)}
      onPointerMove={(e) => {
        if (drag.current) {
          const d = drag.current;
          setView((v) => ({ ...v, x: d.vx + e.clientX - d.x, y: d.vy + e.clientY - d.y }));
        } else {
          onPointer(toImage(e.clientX, e.clientY));
        }
      }}
      onPointerLeave={() => onPointer(null)}
      onDoubleClick={fitView}
    >
      <canvas
        key={`${width}x${height}:${canvasKey}`}
        ref={setCanvas}
        width={width}
        height={height}
        aria-label="Image plane"
        data-scale={view.scale.toFixed(3)}
        className="absolute left-0 top-0 origin-top-left"
        style={{ transform: `translate(${view.x}px, ${view.y}px) scale(${view.scale})`, imageRendering: "pixelated" }}
      />
      {overlay?.(view)}
      {bar && (
        <div className="pointer-events-none absolute bottom-3 right-4 text-right text-[11px] text-white" aria-label={`Scale bar ${bar.um} µm`}>
          <div className="mb-1 h-1 bg-white" style={{ width: `${bar.px}px`, marginLeft: "auto" }} />
          <span className="num">{bar.um >= 1 ? bar.um : bar.um.toPrecision(1)} µm</span>
        </div>
      )}
      <span className="num pointer-events-none absolute bottom-3 left-4 text-[11px] text-graphite-300">{Math.round(view.scale * 100)} %</span>
    </div>
  );
});
