"use client";

import { AxisBottom, AxisLeft } from "@visx/axis";
import { scaleLinear } from "@visx/scale";
import { LinePath } from "@visx/shape";
import type { LightnessCheck } from "@/lib/imaging/table-editor";

const W = 480;
const H = 200;
const M = { top: 10, right: 12, bottom: 38, left: 58 };

/** CIELAB L* of each entry against the entry index, with the worst reversal marked. */
export function LightnessPlot({ profile, check }: { profile: Float64Array; check: LightnessCheck }) {
  const x = scaleLinear<number>({ domain: [0, 255], range: [M.left, W - M.right] });
  const y = scaleLinear<number>({ domain: [0, 100], range: [H - M.bottom, M.top] });
  const points = Array.from(profile, (l, i) => ({ i, l }));
  const reversal = check.direction === "neither" ? check.worstReversal : null;
  const summary =
    check.direction === "neither"
      ? reversal
        ? `not monotonic: L* goes back by ${reversal.amount.toFixed(1)} from entry ${reversal.from} to entry ${reversal.to}`
        : "flat"
      : `${check.direction} monotonically from L* ${check.first.toFixed(1)} to ${check.last.toFixed(1)}`;
  return (
    <svg viewBox={`0 0 ${W} ${H}`} className="w-full max-w-xl" role="img" aria-label={`Lightness profile: ${summary}`}>
      <rect x={M.left} y={M.top} width={W - M.left - M.right} height={H - M.top - M.bottom} fill="#fbfbfa" stroke="#e6e6e3" />
      {reversal && (
        <g>
          <rect x={x(reversal.from)} y={M.top} width={Math.max(1, x(reversal.to) - x(reversal.from))} height={H - M.top - M.bottom} fill="#fbe0df" />
          <title>
            L* goes back by {reversal.amount.toFixed(1)} from entry {reversal.from} to {reversal.to}
          </title>
        </g>
      )}
      <LinePath data={points} x={(p) => x(p.i)} y={(p) => y(p.l)} stroke="#1c1c19" strokeWidth={1.5} />
      <AxisLeft
        left={M.left}
        scale={y}
        numTicks={5}
        stroke="#6b6b66"
        tickStroke="#6b6b66"
        label="L* (CIELAB, D65)"
        labelOffset={30}
        labelProps={{ fill: "#45453f", fontSize: 11, textAnchor: "middle" }}
        tickLabelProps={{ fill: "#45453f", fontSize: 10, textAnchor: "end", dx: -2, dy: 3, fontFamily: "monospace" }}
      />
      <AxisBottom
        top={H - M.bottom}
        scale={x}
        tickValues={[0, 32, 64, 96, 128, 160, 192, 224, 255]}
        stroke="#6b6b66"
        tickStroke="#6b6b66"
        label="Entry (0–255)"
        labelProps={{ fill: "#45453f", fontSize: 11, textAnchor: "middle" }}
        tickLabelProps={{ fill: "#45453f", fontSize: 10, textAnchor: "middle", fontFamily: "monospace" }}
      />
    </svg>
  );
}
