"use client";

import { useEffect, useRef } from "react";

/**
 * A colour table drawn as a strip: one canvas pixel per entry, stretched to the strip's width
 * (image-rendering: pixelated keeps the 256 entries exact instead of blurring between them).
 */
export function Ramp({ rgb, label, className = "h-8" }: { rgb: Uint8Array; label: string; className?: string }) {
  const canvas = useRef<HTMLCanvasElement>(null);
  useEffect(() => {
    const ctx = canvas.current?.getContext("2d");
    if (!ctx) return;
    const image = ctx.createImageData(256, 1);
    for (let i = 0; i < 256; i++) {
      image.data[4 * i] = rgb[3 * i];
      image.data[4 * i + 1] = rgb[3 * i + 1];
      image.data[4 * i + 2] = rgb[3 * i + 2];
      image.data[4 * i + 3] = 255;
    }
    ctx.putImageData(image, 0, 0);
  }, [rgb]);
  return (
    <canvas
      ref={canvas}
      width={256}
      height={1}
      role="img"
      aria-label={label}
      className={`block w-full rounded-sm border border-paper-300 ${className}`}
      style={{ imageRendering: "pixelated" }}
    />
  );
}
