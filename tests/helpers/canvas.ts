// Reads back the bench's plane canvas. Where the browser can transfer a canvas to a worker
// (Chromium), the bench worker draws into it and the element on the page has no 2D context, so
// pixels are read through the element's readPixels (components/bench/viewport.tsx, PlaneCanvas),
// which asks the worker's canvas, or the 2D context on the main-thread fallback.
import type { Locator } from "playwright-core";

/** RGBA bytes of a rectangle of the plane canvas (image pixels, row-major). */
export async function readPlanePixels(canvas: Locator, x: number, y: number, width: number, height: number): Promise<number[]> {
  return canvas.evaluate(
    async (element, rect) => {
      const read = (element as HTMLCanvasElement & { readPixels?: (x: number, y: number, w: number, h: number) => Promise<Uint8ClampedArray> }).readPixels;
      if (!read) throw new Error("The plane canvas has no readPixels");
      return Array.from(await read(rect.x, rect.y, rect.width, rect.height));
    },
    { x, y, width, height },
  );
}

/** "#rrggbb" of one image pixel of the plane canvas. */
export async function planePixelHex(canvas: Locator, x: number, y: number): Promise<string> {
  const [r, g, b] = await readPlanePixels(canvas, x, y, 1, 1);
  return `#${[r, g, b].map((v) => v.toString(16).padStart(2, "0")).join("")}`;
}
