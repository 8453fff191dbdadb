"use client";

import { AxisBottom, AxisLeft } from "@visx/axis";
import { scaleLinear } from "@visx/scale";
import { LinePath } from "@visx/shape";
import { useEffect, useMemo, useRef, useState } from "react";
import type { BenchWorkerClient } from "@/lib/client/use-bench-worker";
import { shapeOf } from "@/lib/client/regions";
import type { AreaShape } from "@/lib/imaging/regions";
import { planeCsv, traceCsv } from "@/lib/regions-csv";
import type { DatasetOut } from "@/lib/schemas/dataset";
import type { RegionResult, TraceResult } from "@/workers/bench-api";
import type { RegionsController, RegionTool } from "./region-overlay";

interface ChannelInfo {
  c: number;
  name: string;
  colour: string;
  visible: boolean;
}

const TOOLS: { tool: RegionTool; label: string }[] = [
  { tool: "select", label: "Select" },
  { tool: "rect", label: "Rectangle" },
  { tool: "ellipse", label: "Ellipse" },
  { tool: "polygon", label: "Polygon" },
  { tool: "line", label: "Line" },
];

/** Four significant digits, without exponent for everyday sizes. */
function fmt(v: number | null | undefined): string {
  if (v === null || v === undefined || Number.isNaN(v)) return "—";
  if (Number.isInteger(v)) return String(v);
  const a = Math.abs(v);
  return a >= 1e6 || a < 1e-3 ? v.toExponential(3) : Number(v.toPrecision(6)).toString();
}

function download(name: string, text: string) {
  const url = URL.createObjectURL(new Blob([text], { type: "text/csv;charset=utf-8" }));
  const a = document.createElement("a");
  a.href = url;
  a.download = name;
  document.body.appendChild(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 1000);
}

const safeName = (s: string) => s.replace(/[^\w.-]+/g, "-").replace(/^-+|-+$/g, "") || "dataset";

const PW = 320;
const PH = 170;
const PM = { top: 8, right: 8, bottom: 34, left: 52 };

/** One line per channel against distance (px) or plane index; linear axes. */
function LinePlot({ series, xLabel, yLabel, label }: { series: { colour: string; name: string; x: number[]; y: number[] }[]; xLabel: string; yLabel: string; label: string }) {
  const xs = series.flatMap((s) => s.x);
  const ys = series.flatMap((s) => s.y).filter((v) => Number.isFinite(v));
  if (xs.length === 0 || ys.length === 0) return <p className="text-[11px] text-graphite-300">Nothing to plot.</p>;
  let [y0, y1] = [Math.min(...ys), Math.max(...ys)];
  if (y0 === y1) [y0, y1] = [y0 - 1, y1 + 1];
  const x = scaleLinear<number>({ domain: [Math.min(...xs), Math.max(Math.max(...xs), Math.min(...xs) + 1)], range: [PM.left, PW - PM.right] });
  const y = scaleLinear<number>({ domain: [y0, y1], range: [PH - PM.bottom, PM.top], nice: true });
  const tick = { fill: "#c9c9c4", fontSize: 9, fontFamily: "monospace" };
  return (
    <svg viewBox={`0 0 ${PW} ${PH}`} className="w-full" role="img" aria-label={label}>
      {series.map((s) => (
        <LinePath
          key={s.name}
          data={s.x.map((xv, i) => ({ xv, yv: s.y[i] })).filter((p) => Number.isFinite(p.yv))}
          x={(p) => x(p.xv)}
          y={(p) => y(p.yv)}
          stroke={s.colour}
          strokeWidth={1.5}
        />
      ))}
      <AxisLeft left={PM.left} scale={y} numTicks={4} stroke="#6b6b66" tickStroke="#6b6b66" label={yLabel} labelOffset={34} labelProps={{ fill: "#c9c9c4", fontSize: 10, textAnchor: "middle" }} tickLabelProps={{ ...tick, textAnchor: "end", dx: -2, dy: 3 }} />
      <AxisBottom top={PH - PM.bottom} scale={x} numTicks={5} stroke="#6b6b66" tickStroke="#6b6b66" label={xLabel} labelProps={{ fill: "#c9c9c4", fontSize: 10, textAnchor: "middle" }} tickLabelProps={{ ...tick, textAnchor: "middle" }} />
    </svg>
  );
}

export function RegionsPanel({
  ctl,
  bench,
  opened,
  dataset,
  channels,
  z,
  t,
  corrected,
}: {
  ctl: RegionsController;
  bench: BenchWorkerClient;
  opened: boolean;
  dataset: DatasetOut;
  channels: ChannelInfo[];
  z: number;
  t: number;
  /** The bench shows flat/dark-corrected values (the worker holds the frames). */
  corrected: boolean;
}) {
  const detector = dataset.detector ? { offsetDn: dataset.detector.offsetDn, gainDnPerE: dataset.detector.gainDnPerE } : null;
  const [electrons, setElectrons] = useState(true);
  const useElectrons = Boolean(detector && electrons);
  const visible = useMemo(() => channels.filter((c) => c.visible), [channels]);
  const nameOf = (c: number) => channels.find((x) => x.c === c)?.name ?? `c${c}`;
  const colourOf = (c: number) => channels.find((x) => x.c === c)?.colour ?? "#ffffff";

  // Statistics of every region on the current plane, for the visible channels.
  const [results, setResults] = useState<{ key: string; data: RegionResult[] } | null>(null);
  const [statsError, setStatsError] = useState<string | null>(null);
  const regionRefs = useMemo(() => ctl.regions.map((r) => ({ id: r.id, shape: ctl.moving?.id === r.id ? ctl.moving.shape : shapeOf(r) })), [ctl.regions, ctl.moving]);
  const statsKey = JSON.stringify([regionRefs, z, t, visible.map((c) => c.c), corrected, useElectrons]);
  useEffect(() => {
    if (!opened || regionRefs.length === 0 || visible.length === 0) return;
    const controller = new AbortController();
    const handle = setTimeout(() => {
      bench
        .regionStats(z, t, regionRefs, controller.signal, {
          channels: visible.map((c) => c.c),
          corrected,
          detector: useElectrons ? detector : null,
          pixelSizeUm: { x: dataset.physicalSizeX ?? null, y: dataset.physicalSizeY ?? dataset.physicalSizeX ?? null },
        })
        .then((data) => {
          setResults({ key: statsKey, data });
          setStatsError(null);
        })
        .catch((e: unknown) => {
          if (!(e instanceof Error && e.name === "AbortError")) setStatsError(e instanceof Error ? e.message : String(e));
        });
    }, 60);
    return () => {
      clearTimeout(handle);
      controller.abort();
    };
    // statsKey carries every input that changes the numbers.
    // eslint-disable-next-line react-hooks/exhaustive-deps
  }, [bench, opened, statsKey]);

  // Trace over t or z for the selected area region.
  const sel = ctl.selected;
  const [axis, setAxis] = useState<"t" | "z">((dataset.sizeT ?? 1) > 1 ? "t" : "z");
  const [backgroundId, setBackgroundId] = useState<number | null>(null);
  const [trace, setTrace] = useState<{ regionId: number; result: TraceResult; background: string | null } | null>(null);
  const [progress, setProgress] = useState<{ done: number; total: number } | null>(null);
  const [traceError, setTraceError] = useState<string | null>(null);
  const [traceStat, setTraceStat] = useState<"mean" | "sum">("mean");
  const running = useRef<AbortController | null>(null);
  useEffect(() => () => running.current?.abort(), []);

  const runTrace = async (axis: "t" | "z") => {
    if (!sel || sel.kind === "line") return;
    running.current?.abort();
    const controller = new AbortController();
    running.current = controller;
    const length = axis === "t" ? (dataset.sizeT ?? 1) : (dataset.sizeZ ?? 1);
    const bg = ctl.regions.find((r) => r.id === backgroundId && r.id !== sel.id && r.kind !== "line") ?? null;
    setTraceError(null);
    setProgress({ done: 0, total: length });
    try {
      const result = await bench.trace(
        {
          shape: shapeOf(sel) as AreaShape,
          background: bg ? (shapeOf(bg) as AreaShape) : null,
          axis,
          fixed: axis === "t" ? z : t,
          length,
          channels: visible.map((c) => c.c),
          corrected,
          detector: useElectrons ? detector : null,
        },
        { signal: controller.signal, onProgress: (done, total) => !controller.signal.aborted && setProgress({ done, total }) },
      );
      setTrace({ regionId: sel.id, result, background: bg?.name ?? null });
    } catch (e) {
      if (e instanceof Error && e.name === "AbortError") setTraceError("Trace cancelled.");
      else setTraceError(e instanceof Error ? e.message : String(e));
    } finally {
      if (running.current === controller) running.current = null;
      setProgress(null);
    }
  };

  const current = results?.key === statsKey ? results.data : results?.data;
  const unit = current?.[0]?.unit ?? (useElectrons ? "e⁻" : "DN");
  const base = safeName(dataset.title);
  const areaRegions = ctl.regions.filter((r) => r.kind !== "line");
  const canTrace = sel && sel.kind !== "line" && visible.length > 0 && !progress;
  const shownTrace = trace && sel && trace.regionId === sel.id ? trace : null;

  return (
    <section aria-label="Regions" className="space-y-2 rounded border border-graphite-700 p-2 text-xs">
      <div className="flex items-center justify-between">
        <span className="font-semibold uppercase tracking-wide text-graphite-200">Regions</span>
        {detector && (
          <label className="flex items-center gap-1 text-[11px] text-graphite-200" title={`${dataset.detector?.name}: offset ${detector.offsetDn} DN, K = ${detector.gainDnPerE} DN/e⁻`}>
            <input type="checkbox" checked={electrons} onChange={(e) => setElectrons(e.target.checked)} className="accent-flux-500" />
            photoelectrons
          </label>
        )}
      </div>
      {ctl.canEdit ? (
        <div role="toolbar" aria-label="Region tools" className="flex flex-wrap gap-1">
          {TOOLS.map(({ tool, label }) => (
            <button
              key={tool}
              type="button"
              aria-pressed={ctl.tool === tool}
              onClick={() => ctl.setTool(tool)}
              className={`rounded border px-1.5 py-0.5 ${ctl.tool === tool ? "border-flux-400 bg-flux-700 text-white" : "border-graphite-600 text-graphite-100 hover:bg-graphite-800"}`}
            >
              {label}
            </button>
          ))}
        </div>
      ) : (
        <p className="text-[11px] text-graphite-300">Regions are drawn by the lab&apos;s editors; you can select and measure them.</p>
      )}
      {ctl.tool !== "select" && (
        <p className="text-[11px] text-graphite-300" role="status">
          {ctl.tool === "polygon" ? "Click the corners; double-click, Enter or a click on the first corner closes it." : "Drag on the image."} Escape cancels.
        </p>
      )}
      {ctl.tool === "select" && ctl.selected && ctl.canEdit && (
        <p className="text-[11px] text-graphite-300" aria-label="Editing the selected region">
          {ctl.selected.kind === "polygon" ? "Drag a corner handle to move that corner" : ctl.selected.kind === "line" ? "Drag an end handle to move that end" : "Drag a corner handle to resize (the opposite corner stays)"}; arrow keys move it by 1 px (Shift: 10); Escape lets go, so the arrow keys step through t and z again.
        </p>
      )}
      {ctl.error && (
        <p role="alert" className="text-[11px] text-fault-300">
          {ctl.error}
        </p>
      )}
      {ctl.list.isPending && <p className="text-[11px] text-graphite-300">Loading regions…</p>}
      {ctl.list.isError && <p role="alert" className="text-[11px] text-fault-300">Regions could not be loaded: {ctl.list.error.message}</p>}
      {!ctl.list.isPending && ctl.regions.length === 0 && <p className="text-[11px] text-graphite-300">No regions yet{ctl.canEdit ? ": choose a tool and draw on the image." : "."}</p>}
      {statsError && <p role="alert" className="text-[11px] text-fault-300">{statsError}</p>}

      <ul className="space-y-1.5">
        {ctl.regions.map((region) => {
          const r = current?.find((x) => x.id === region.id);
          const selected = region.id === ctl.selectedId;
          return (
            <li key={region.id} className={`rounded border p-1.5 ${selected ? "border-flux-400" : "border-graphite-700"}`} aria-label={`Region ${region.name}`}>
              <div className="flex items-center gap-1">
                <span className="inline-block h-2.5 w-2.5 shrink-0 rounded-sm" style={{ background: region.colour }} />
                {ctl.canEdit ? (
                  <input
                    aria-label="Region name"
                    defaultValue={region.name}
                    key={`${region.id}:${region.version}`}
                    onFocus={() => ctl.select(region.id)}
                    onKeyDown={(e) => e.key === "Enter" && (e.target as HTMLInputElement).blur()}
                    onBlur={(e) => {
                      const name = e.target.value.trim();
                      if (name && name !== region.name) void ctl.save(region, { name });
                      else e.target.value = region.name;
                    }}
                    className="min-w-0 flex-1 rounded border border-graphite-700 bg-graphite-950 px-1"
                  />
                ) : (
                  <button type="button" onClick={() => ctl.select(region.id)} className="min-w-0 flex-1 truncate text-left">
                    {region.name}
                  </button>
                )}
                <button type="button" onClick={() => ctl.select(selected ? null : region.id)} className="rounded border border-graphite-600 px-1" aria-pressed={selected}>
                  {selected ? "Selected" : "Select"}
                </button>
                {ctl.canEdit && (
                  <button type="button" onClick={() => void ctl.removeRegion(region.id)} className="rounded border border-graphite-600 px-1 text-fault-300" aria-label={`Delete ${region.name}`}>
                    ✕
                  </button>
                )}
              </div>
              {r && region.kind !== "line" && (
                <table className="num mt-1 w-full text-[11px]" aria-label={`Statistics of ${region.name}`}>
                  <thead className="text-graphite-300">
                    <tr>
                      <th className="text-left font-normal">channel</th>
                      <th className="pl-1.5 text-right font-normal">mean</th>
                      <th className="pl-1.5 text-right font-normal">sd</th>
                      <th className="pl-1.5 text-right font-normal">min</th>
                      <th className="pl-1.5 text-right font-normal">max</th>
                      <th className="pl-1.5 text-right font-normal">sum</th>
                    </tr>
                  </thead>
                  <tbody>
                    {r.channels.map((ch) => (
                      <tr key={ch.c} data-channel={nameOf(ch.c)}>
                        <td style={{ color: colourOf(ch.c) }}>{nameOf(ch.c)}</td>
                        <td className="pl-1.5 text-right" data-stat="mean">{fmt(ch.stats?.mean)}</td>
                        <td className="pl-1.5 text-right" data-stat="sd">{fmt(ch.stats?.sd)}</td>
                        <td className="pl-1.5 text-right" data-stat="min">{fmt(ch.stats?.min)}</td>
                        <td className="pl-1.5 text-right" data-stat="max">{fmt(ch.stats?.max)}</td>
                        <td className="pl-1.5 text-right" data-stat="sum">{fmt(ch.stats?.sum)}</td>
                      </tr>
                    ))}
                  </tbody>
                </table>
              )}
              {r && region.kind !== "line" && r.channels[0]?.stats && (
                <p className="num text-[11px] text-graphite-300" aria-label={`Area of ${region.name}`}>
                  area {r.channels[0].stats.areaPx} px{r.channels[0].stats.areaUm2 != null ? ` · ${fmt(r.channels[0].stats.areaUm2)} µm²` : ""} · {unit}
                </p>
              )}
              {r?.channels.map((ch) => {
                const n = ch.stats?.countAtCeiling ?? ch.profile?.countAtCeiling ?? 0;
                return n > 0 ? (
                  <p key={ch.c} className="text-[11px] font-semibold text-[#ff6b6b]" role="alert">
                    {nameOf(ch.c)}: {n} px at the ceiling ({dataset.ceiling}) — do not quantify
                  </p>
                ) : null;
              })}
              {r && region.kind === "line" && (
                <LinePlot
                  label={`Line profile of ${region.name}`}
                  xLabel="distance (px)"
                  yLabel={unit}
                  series={r.channels.map((ch) => ({ name: nameOf(ch.c), colour: colourOf(ch.c), x: ch.profile?.distance ?? [], y: ch.profile?.value ?? [] }))}
                />
              )}
            </li>
          );
        })}
      </ul>

      {current && current.some((r) => r.channels.some((c) => c.stats)) && (
        <button
          type="button"
          className="rounded border border-graphite-600 px-2 py-0.5"
          onClick={() =>
            download(
              `${base}-regions-z${z}-t${t}.csv`,
              planeCsv(
                dataset.title,
                z,
                t,
                dataset.timeIncrement,
                unit,
                current.flatMap((r) => {
                  const region = ctl.regions.find((x) => x.id === r.id);
                  return r.channels.flatMap((ch) => (ch.stats && region ? [{ region: region.name, channel: nameOf(ch.c), stats: ch.stats }] : []));
                }),
              ),
            )
          }
        >
          Export this plane (CSV)
        </button>
      )}

      {sel && sel.kind !== "line" && (
        <div className="space-y-1.5 border-t border-graphite-700 pt-2" aria-label="Trace">
          <div className="flex flex-wrap items-center gap-1">
            <span className="text-graphite-200">Trace of {sel.name}</span>
            <label className="flex items-center gap-1">
              background
              <select aria-label="Background region" value={backgroundId ?? ""} onChange={(e) => setBackgroundId(e.target.value ? Number(e.target.value) : null)} className="max-w-28 rounded border border-graphite-600 bg-graphite-950 px-1 py-0.5">
                <option value="">none</option>
                {areaRegions
                  .filter((r) => r.id !== sel.id)
                  .map((r) => (
                    <option key={r.id} value={r.id}>
                      {r.name}
                    </option>
                  ))}
              </select>
            </label>
          </div>
          <div className="flex flex-wrap items-center gap-1">
            {(["t", "z"] as const).map((a) => (
              <button
                key={a}
                type="button"
                disabled={!canTrace || (a === "t" ? (dataset.sizeT ?? 1) : (dataset.sizeZ ?? 1)) < 2}
                onClick={() => {
                  setAxis(a);
                  void runTrace(a);
                }}
                className="rounded bg-flux-600 px-2 py-0.5 font-medium text-white hover:bg-flux-500 disabled:opacity-50"
              >
                Trace over {a}
              </button>
            ))}
            {progress && (
              <>
                <progress aria-label="Trace progress" max={progress.total} value={progress.done} className="h-2 w-24" />
                <span className="num">
                  {progress.done}/{progress.total}
                </span>
                <button type="button" onClick={() => running.current?.abort()} className="rounded border border-graphite-600 px-1.5 py-0.5">
                  Cancel
                </button>
              </>
            )}
          </div>
          <p className="text-[11px] text-graphite-300">
            Every plane {axis === "t" ? `over t at z ${z + 1}` : `over z at t ${t + 1}`}, visible channels; {corrected ? "flat/dark corrected, " : ""}
            {backgroundId !== null ? "background mean per pixel subtracted, " : ""}in {useElectrons ? (corrected ? "e⁻ (corrected / K)" : "e⁻ ((DN − offset) / K)") : corrected ? "corrected DN" : "DN"}.
          </p>
          {traceError && <p role="status" className="text-[11px] text-fault-300">{traceError}</p>}
          {shownTrace && (
            <div className="space-y-1">
              <div className="flex items-center gap-2">
                <label className="flex items-center gap-1">
                  plot
                  <select aria-label="Trace statistic" value={traceStat} onChange={(e) => setTraceStat(e.target.value as "mean" | "sum")} className="rounded border border-graphite-600 bg-graphite-950 px-1 py-0.5">
                    <option value="mean">mean</option>
                    <option value="sum">sum</option>
                  </select>
                </label>
                <button
                  type="button"
                  className="rounded border border-graphite-600 px-2 py-0.5"
                  onClick={() => download(`${base}-${safeName(sel.name)}-trace-${shownTrace.result.axis}.csv`, traceCsv(dataset.title, sel.name, nameOf, dataset.timeIncrement, shownTrace.result))}
                >
                  Export trace (CSV)
                </button>
              </div>
              <LinePlot
                label={`Trace of ${sel.name} over ${shownTrace.result.axis}: ${traceStat} per channel`}
                xLabel={shownTrace.result.axis === "t" ? (dataset.timeIncrement ? "time (s)" : "t (index)") : "z (index)"}
                yLabel={`${traceStat} (${shownTrace.result.unit})`}
                series={[...new Set(shownTrace.result.points.flatMap((p) => p.channels.map((c) => c.c)))].map((c) => ({
                  name: nameOf(c),
                  colour: colourOf(c),
                  x: shownTrace.result.points.map((p) => (shownTrace.result.axis === "t" ? (dataset.timeIncrement ? p.t * dataset.timeIncrement : p.t) : p.z)),
                  y: shownTrace.result.points.map((p) => p.channels.find((x) => x.c === c)?.[traceStat] ?? NaN),
                }))}
              />
              <p className="num text-[11px] text-graphite-300" role="status" aria-label="Trace summary">
                {shownTrace.result.points.length} planes · {shownTrace.result.areaPx} px{shownTrace.background ? ` · background: ${shownTrace.background}` : ""}
              </p>
            </div>
          )}
        </div>
      )}
    </section>
  );
}
