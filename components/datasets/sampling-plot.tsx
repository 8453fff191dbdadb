"use client";

import { AxisBottom } from "@visx/axis";
import { scaleLog } from "@visx/scale";

export interface SamplingPlotRow {
  label: string;
  colour: string;
  pixelUm: number;
  nyquistPixelUm: number;
  abbeUm: number;
}

const W = 560;
const ROW = 26;
const M = { top: 8, right: 16, bottom: 40, left: 110 };

/** The nearest 1, 2 or 5 × 10^k below (or above) v, so the log axis starts and ends on a labelled tick. */
function niceBound(v: number, direction: "down" | "up"): number {
  const decade = 10 ** Math.floor(Math.log10(v));
  const steps = [1, 2, 5, 10].map((m) => m * decade);
  return direction === "down" ? steps.filter((s) => s <= v).pop()! : steps.find((s) => s >= v)!;
}

/** Pixel size against the Nyquist pixel size and the Abbe limit, per channel, on a log axis. */
export function SamplingPlot({ rows }: { rows: SamplingPlotRow[] }) {
  if (!rows.length) return null;
  const values = rows.flatMap((r) => [r.pixelUm, r.nyquistPixelUm, r.abbeUm]);
  const lo = niceBound(Math.min(...values) / 1.3, "down");
  const hi = niceBound(Math.max(...values) * 1.3, "up");
  const H = M.top + rows.length * ROW + M.bottom;
  const x = scaleLog<number>({ domain: [lo, hi], range: [M.left, W - M.right] });
  const ticks = x.ticks().filter((t) => {
    const mantissa = t / 10 ** Math.floor(Math.log10(t) + 1e-9);
    return [1, 2, 5].some((m) => Math.abs(mantissa - m) < 1e-6);
  });
  const summary = rows.map((r) => `${r.label}: pixel ${r.pixelUm.toPrecision(3)} µm, Nyquist ${r.nyquistPixelUm.toPrecision(3)} µm`).join("; ");
  return (
    <figure className="space-y-1">
      <svg viewBox={`0 0 ${W} ${H}`} className="w-full max-w-xl" role="img" aria-label={`Pixel size against Nyquist, log scale. ${summary}`}>
        {rows.map((r, i) => {
          const y = M.top + i * ROW + ROW / 2;
          const under = r.pixelUm > r.nyquistPixelUm * (1 + 1e-9);
          return (
            <g key={r.label + i}>
              <text x={M.left - 8} y={y + 4} textAnchor="end" fontSize={11} fill="#2b2b27">
                {r.label.length > 16 ? `${r.label.slice(0, 15)}…` : r.label}
              </text>
              <line x1={M.left} x2={W - M.right} y1={y} y2={y} stroke="#ececea" />
              {/* The gap between the pixel and the Nyquist size: dashed when the pixel is too large. */}
              <line x1={x(r.pixelUm)} x2={x(r.nyquistPixelUm)} y1={y} y2={y} stroke="#6b6b66" strokeWidth={2} strokeDasharray={under ? "4 3" : undefined} />
              <line x1={x(r.nyquistPixelUm)} x2={x(r.nyquistPixelUm)} y1={y - 8} y2={y + 8} stroke="#1c1c19" strokeWidth={2} />
              <circle cx={x(r.pixelUm)} cy={y} r={5} fill={r.colour} stroke="#1c1c19" />
              {/* Outline only and drawn last, so it stays visible where it meets the pixel marker. */}
              <path d={`M ${x(r.abbeUm)} ${y - 7} l 7 7 l -7 7 l -7 -7 z`} fill="none" stroke="#1c1c19" strokeWidth={1.5} />
            </g>
          );
        })}
        <AxisBottom
          top={H - M.bottom}
          scale={x}
          tickValues={ticks}
          tickFormat={(v) => String(Number(Number(v).toPrecision(2)))}
          stroke="#6b6b66"
          tickStroke="#6b6b66"
          label="Size at the sample (µm, log scale)"
          labelProps={{ fill: "#45453f", fontSize: 11, textAnchor: "middle" }}
          tickLabelProps={{ fill: "#45453f", fontSize: 10, textAnchor: "middle", fontFamily: "monospace" }}
        />
      </svg>
      <figcaption className="text-xs text-paper-700">
        ● pixel size · │ Nyquist pixel size · ◇ Abbe limit. Left of the bar meets Nyquist; a dashed gap means the pixels are too large. Log scale.
      </figcaption>
    </figure>
  );
}
