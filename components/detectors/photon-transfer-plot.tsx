"use client";

import { AxisBottom, AxisLeft } from "@visx/axis";
import { scaleLinear } from "@visx/scale";
import { Line, LinePath } from "@visx/shape";

export interface PlotPoint {
  pages: [number, number];
  signalDn: number;
  varianceDn2: number;
  inFit: boolean;
}

const W = 560;
const H = 260;
const M = { top: 14, right: 16, bottom: 40, left: 64 };
const INK = "#1c1c19";
const AXIS = "#6b6b66";
const LABEL = "#45453f";
const LINE = "#0f6659"; // flux-700: the fitted line
const MARK = "#7a5300"; // caution-700: saturation

const tickLabel = (anchor: "end" | "middle") => ({ fill: LABEL, fontSize: 10, textAnchor: anchor, fontFamily: "monospace", ...(anchor === "end" ? { dx: -2, dy: 3 } : {}) });
const axisLabel = { fill: LABEL, fontSize: 11, textAnchor: "middle" as const };
const fmt = (v: number) => (Math.abs(v) >= 10_000 ? `${Math.round(v / 1000)}k` : String(Math.round(v * 100) / 100));

/**
 * The photon-transfer plot (EMVA 1288): temporal variance above the dark variance against the mean
 * above the dark level, both linear axes, with the line through the origin whose slope is K. Filled
 * points were fitted; hollow ones were not (beyond 70 % of saturation); the saturation point is marked.
 */
export function PhotonTransferPlot({ points, gainDnPerE, fitLimitDn, saturationIndex }: { points: PlotPoint[]; gainDnPerE: number; fitLimitDn: number; saturationIndex: number }) {
  const maxX = Math.max(...points.map((p) => p.signalDn)) * 1.05;
  const maxY = Math.max(...points.map((p) => p.varianceDn2), gainDnPerE * maxX) * 1.05;
  const x = scaleLinear<number>({ domain: [0, maxX], range: [M.left, W - M.right], nice: true });
  const y = scaleLinear<number>({ domain: [Math.min(0, ...points.map((p) => p.varianceDn2)), maxY], range: [H - M.bottom, M.top], nice: true });
  const sat = points[saturationIndex];
  // The line runs to the plot's right edge or its top, whichever it meets first.
  const xLineEnd = Math.min(x.domain()[1], y.domain()[1] / gainDnPerE);
  return (
    <svg
      viewBox={`0 0 ${W} ${H}`}
      className="w-full max-w-2xl"
      role="img"
      aria-label={`Photon-transfer plot: variance against mean for ${points.length} levels, ${points.filter((p) => p.inFit).length} fitted; fitted line slope K = ${gainDnPerE.toFixed(4)} DN/e⁻`}
    >
      <rect x={M.left} y={M.top} width={W - M.left - M.right} height={H - M.top - M.bottom} fill="#fbfbfa" stroke="#e6e6e3" />
      <Line from={{ x: x(fitLimitDn), y: M.top }} to={{ x: x(fitLimitDn), y: H - M.bottom }} stroke={AXIS} strokeDasharray="3 3" strokeWidth={1} />
      <text x={x(fitLimitDn) + 4} y={H - M.bottom - 6} fontSize={10} fill={LABEL}>
        fit limit: 70 % of saturation
      </text>
      <LinePath
        data={[
          { a: 0, b: 0 },
          { a: xLineEnd, b: gainDnPerE * xLineEnd },
        ]}
        x={(p) => x(p.a)}
        y={(p) => y(p.b)}
        stroke={LINE}
        strokeWidth={1.5}
      />
      {points.map((p, i) => (
        <circle key={i} cx={x(p.signalDn)} cy={y(p.varianceDn2)} r={3.5} fill={p.inFit ? INK : "#ffffff"} stroke={INK} strokeWidth={1.2}>
          <title>
            Pages {p.pages[0]}, {p.pages[1]}: mean {p.signalDn.toFixed(1)} DN above dark, variance {p.varianceDn2.toFixed(1)} DN²{p.inFit ? " (fitted)" : " (not fitted)"}
          </title>
        </circle>
      ))}
      {sat && (
        <g>
          <circle cx={x(sat.signalDn)} cy={y(sat.varianceDn2)} r={7} fill="none" stroke={MARK} strokeWidth={1.5} />
          <text x={x(sat.signalDn) - 8} y={y(sat.varianceDn2) - 10} fontSize={10} fill={MARK} textAnchor="end">
            saturation (variance peak)
          </text>
        </g>
      )}
      <AxisLeft left={M.left} scale={y} numTicks={5} stroke={AXIS} tickStroke={AXIS} tickFormat={(v) => fmt(Number(v))} label="Temporal variance σ²y − σ²y.dark (DN²)" labelProps={axisLabel} tickLabelProps={tickLabel("end")} labelOffset={40} />
      <AxisBottom top={H - M.bottom} scale={x} numTicks={6} stroke={AXIS} tickStroke={AXIS} tickFormat={(v) => fmt(Number(v))} label="Mean above dark μy − μy.dark (DN)" labelProps={axisLabel} tickLabelProps={tickLabel("middle")} />
    </svg>
  );
}

/** Relative residuals of each level from the fitted line, in %, with the zero line; fitted levels filled. */
export function ResidualsPlot({ points, relativeResiduals }: { points: PlotPoint[]; relativeResiduals: number[] }) {
  const values = relativeResiduals.map((r) => r * 100);
  const maxX = Math.max(...points.map((p) => p.signalDn)) * 1.05;
  // The fitted levels set the scale; levels past saturation (far below the line) are clamped and marked.
  const fittedSpan = Math.max(1, ...values.filter((_, i) => points[i].inFit).map(Math.abs)) * 1.4;
  const x = scaleLinear<number>({ domain: [0, maxX], range: [M.left, W - M.right], nice: true });
  const y = scaleLinear<number>({ domain: [-fittedSpan, fittedSpan], range: [180 - M.bottom, M.top], nice: true });
  const [lo, hi] = y.domain();
  return (
    <svg viewBox={`0 0 ${W} 180`} className="w-full max-w-2xl" role="img" aria-label={`Residuals plot: fitted levels lie within ${Math.max(...values.filter((_, i) => points[i].inFit).map(Math.abs)).toFixed(2)} % of the line`}>
      <rect x={M.left} y={M.top} width={W - M.left - M.right} height={180 - M.top - M.bottom} fill="#fbfbfa" stroke="#e6e6e3" />
      <Line from={{ x: M.left, y: y(0) }} to={{ x: W - M.right, y: y(0) }} stroke={LINE} strokeWidth={1} />
      {points.map((p, i) => {
        const v = values[i];
        const clamped = Math.max(lo, Math.min(hi, v));
        return (
          <g key={i}>
            <circle cx={x(p.signalDn)} cy={y(clamped)} r={3.5} fill={p.inFit ? INK : "#ffffff"} stroke={INK} strokeWidth={1.2}>
              <title>
                Pages {p.pages[0]}, {p.pages[1]}: {v.toFixed(2)} % from the line{p.inFit ? " (fitted)" : " (not fitted)"}
              </title>
            </circle>
            {clamped !== v && (
              <text x={x(p.signalDn) - 7} y={y(clamped) + (v < lo ? -4 : 10)} fontSize={9} fill={LABEL} textAnchor="end">
                {v < lo ? "▼" : "▲"} {v.toFixed(0)} % (off scale)
              </text>
            )}
          </g>
        );
      })}
      <AxisLeft left={M.left} scale={y} numTicks={4} stroke={AXIS} tickStroke={AXIS} label="Residual (% of fit)" labelProps={axisLabel} tickLabelProps={tickLabel("end")} labelOffset={36} />
      <AxisBottom top={180 - M.bottom} scale={x} numTicks={6} stroke={AXIS} tickStroke={AXIS} tickFormat={(v) => fmt(Number(v))} label="Mean above dark (DN)" labelProps={axisLabel} tickLabelProps={tickLabel("middle")} />
    </svg>
  );
}
