"use client";

import { AxisBottom } from "@visx/axis";
import { scaleLinear, scaleSymlog } from "@visx/scale";
import { useRef } from "react";

export interface HistogramPlotProps {
  /** Compact histogram of the plane: counts per bin of `binWidth` raw values, from 0. */
  hist: { binWidth: number; counts: number[]; start?: number };
  ceiling: number;
  black: number;
  white: number;
  log: boolean;
  /** x axis over 0…ceiling, or over the data's own range. */
  range: "ceiling" | "data";
  dataMin: number;
  dataMax: number;
  colour: string;
  label: string;
  /** Estimated camera offset (dark level) in DN, marked on the axis; null when unknown. */
  offset?: number | null;
  onChange: (next: { black?: number; white?: number }) => void;
}

const W = 264;
const H = 96;
const M = { top: 6, right: 8, bottom: 22, left: 8 };

/** Counts against raw value, with draggable black/white handles and a marker at the ceiling. */
export function HistogramPlot({ hist, ceiling, black, white, log, range, dataMin, dataMax, colour, label, offset, onChange }: HistogramPlotProps) {
  const svg = useRef<SVGSVGElement>(null);
  const dragging = useRef<"black" | "white" | null>(null);
  const x0 = range === "ceiling" ? 0 : Math.min(dataMin, black);
  const x1 = range === "ceiling" ? ceiling : Math.max(dataMax, white, x0 + 1);
  const x = scaleLinear<number>({ domain: [x0, x1], range: [M.left, W - M.right] });
  const max = Math.max(1, ...hist.counts);
  const y = log
    ? scaleSymlog<number>({ domain: [0, max], range: [H - M.bottom, M.top], constant: 1 })
    : scaleLinear<number>({ domain: [0, max], range: [H - M.bottom, M.top] });

  let path = "";
  let end = x0;
  hist.counts.forEach((count, i) => {
    const a = (hist.start ?? 0) + i * hist.binWidth;
    const b = a + hist.binWidth;
    if (b < x0 || a > x1) return;
    path += `${path ? " L" : `M ${x(Math.max(a, x0))} ${y(0)} L`} ${x(Math.max(a, x0))} ${y(count)} L ${x(Math.min(b, x1))} ${y(count)}`;
    end = Math.min(b, x1);
  });
  // Close down to the baseline where the data end, not where the axis ends.
  path = path ? `${path} L ${x(end)} ${y(0)} Z` : "";

  const valueAt = (clientX: number) => {
    const rect = svg.current!.getBoundingClientRect();
    const px = ((clientX - rect.left) / rect.width) * W;
    return Math.round(Math.min(x1, Math.max(x0, x.invert(px))));
  };

  return (
    <svg
      ref={svg}
      viewBox={`0 0 ${W} ${H}`}
      className="w-full touch-none select-none"
      role="img"
      aria-label={`${label}: histogram of raw values${log ? " (log count axis)" : ""}, black point ${black}, white point ${white}${offset != null ? `, offset estimate ${Math.round(offset)}` : ""}`}
      onPointerMove={(e) => {
        if (!dragging.current) return;
        const v = valueAt(e.clientX);
        if (dragging.current === "black") onChange({ black: Math.min(v, white - 1) });
        else onChange({ white: Math.max(v, black + 1) });
      }}
      onPointerUp={() => (dragging.current = null)}
      onPointerLeave={() => (dragging.current = null)}
    >
      <path d={path} fill={colour} fillOpacity={0.55} stroke={colour} strokeWidth={0.75} />
      {ceiling <= x1 && (
        <line x1={x(ceiling)} x2={x(ceiling)} y1={M.top} y2={H - M.bottom} stroke="#e05050" strokeDasharray="3 2">
          <title>Ceiling {ceiling} DN</title>
        </line>
      )}
      {offset != null && offset >= x0 && offset <= x1 && (
        <line x1={x(offset)} x2={x(offset)} y1={M.top} y2={H - M.bottom} stroke="#8ab4f8" strokeDasharray="1 2">
          <title>Offset estimate {Math.round(offset)} DN</title>
        </line>
      )}
      {(["black", "white"] as const).map((which) => {
        const value = which === "black" ? black : white;
        if (value < x0 || value > x1) return null;
        return (
          <g
            key={which}
            className="cursor-ew-resize"
            onPointerDown={(e) => {
              (e.target as Element).setPointerCapture?.(e.pointerId);
              dragging.current = which;
            }}
          >
            <line x1={x(value)} x2={x(value)} y1={M.top} y2={H - M.bottom} stroke="#f2f2f2" strokeWidth={1.25} />
            <rect x={x(value) - 5} y={H - M.bottom - 10} width={10} height={10} fill={which === "black" ? "#111111" : "#f2f2f2"} stroke="#9e9e9e" />
          </g>
        );
      })}
      <AxisBottom
        top={H - M.bottom}
        scale={x}
        numTicks={4}
        stroke="#7a7a7a"
        tickStroke="#7a7a7a"
        tickLabelProps={{ fill: "#c2c2c2", fontSize: 9, textAnchor: "middle", fontFamily: "monospace" }}
      />
    </svg>
  );
}
