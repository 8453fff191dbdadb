"use client";

import { AxisBottom, AxisLeft } from "@visx/axis";
import { scaleLinear, scaleSymlog } from "@visx/scale";
import { LinePath } from "@visx/shape";
import Link from "next/link";
import { ErrorState, Loading } from "@/components/ui/states";
import { useDataset } from "@/lib/client/datasets";
import { useDatasetCheck, type DatasetCheckReply } from "@/lib/client/checks";
import { VerdictBadge } from "./verdict-badge";

const W = 520;
const H = 160;
const M = { top: 10, right: 12, bottom: 40, left: 52 };

/** Channel colours near white vanish on the light page: draw those in the ink colour instead. */
function plotColour(hex: string): string {
  const m = /^#?([0-9a-f]{6})$/i.exec(hex);
  if (!m) return "#45453f";
  const v = parseInt(m[1], 16);
  const [r, g, b] = [(v >> 16) & 255, (v >> 8) & 255, v & 255];
  return 0.2126 * r + 0.7152 * g + 0.0722 * b > 200 ? "#45453f" : hex;
}
const pct = (f: number) => `${(100 * f).toFixed(f > 0 && f < 0.001 ? 4 : 2)} %`;

/** Counts against raw value on a log count axis, with the ceiling and the offset marked. */
function CheckHistogram({ hist, ceiling, offset, colour, name }: { hist: { binWidth: number; counts: number[] }; ceiling: number; offset: number; colour: string; name: string }) {
  const x = scaleLinear<number>({ domain: [0, ceiling], range: [M.left, W - M.right] });
  const max = Math.max(1, ...hist.counts);
  const y = scaleSymlog<number>({ domain: [0, max], range: [H - M.bottom, M.top], constant: 1 });
  let path = "";
  hist.counts.forEach((count, i) => {
    const a = Math.min(ceiling, i * hist.binWidth);
    const b = Math.min(ceiling, a + hist.binWidth);
    path += `${path ? " L" : `M ${x(a)} ${y(0)} L`} ${x(a)} ${y(count)} L ${x(b)} ${y(count)}`;
  });
  if (path) path += ` L ${x(Math.min(ceiling, hist.counts.length * hist.binWidth))} ${y(0)} Z`;
  return (
    <svg viewBox={`0 0 ${W} ${H}`} className="w-full max-w-[520px]" role="img" aria-label={`Histogram of ${name} over the whole stack, log count axis, ceiling at ${ceiling}`}>
      <path d={path} fill={plotColour(colour)} fillOpacity={0.55} stroke={plotColour(colour)} strokeWidth={0.8} />
      <line x1={x(ceiling)} x2={x(ceiling)} y1={M.top} y2={H - M.bottom} stroke="#a12622" strokeWidth={1.5} strokeDasharray="4 2" />
      <text x={x(ceiling) - 4} y={M.top + 10} textAnchor="end" className="fill-fault-700 text-[10px]">
        ceiling {ceiling}
      </text>
      <line x1={x(offset)} x2={x(offset)} y1={M.top} y2={H - M.bottom} stroke="#45453f" strokeWidth={1} strokeDasharray="2 2" />
      <text x={x(offset) + 4} y={M.top + 10} className="fill-paper-700 text-[10px]">
        offset
      </text>
      <AxisBottom top={H - M.bottom} scale={x} numTicks={6} tickLabelProps={{ fontSize: 10, fill: "#45453f" }} stroke="#d0d0cc" tickStroke="#d0d0cc" label="raw value (DN)" labelProps={{ fontSize: 10, fill: "#45453f" }} />
      <AxisLeft left={M.left} scale={y} numTicks={4} tickFormat={(v) => Number(v).toLocaleString()} tickLabelProps={{ fontSize: 10, fill: "#45453f" }} stroke="#d0d0cc" tickStroke="#d0d0cc" />
    </svg>
  );
}

/** Share of pixels at the ceiling along t or z (mean over the other axis), one line per channel. */
function SaturationPlot({ series, axis, channels }: { series: DatasetCheckReply["series"]; axis: "t" | "z"; channels: { c: number; name: string; colour: string }[] }) {
  const n = Math.max(...series.map((s) => s[axis])) + 1;
  const lines = channels.map((ch) => {
    const sums = new Array<number>(n).fill(0);
    const counts = new Array<number>(n).fill(0);
    for (const s of series) {
      if (s.c !== ch.c) continue;
      sums[s[axis]] += s.saturated;
      counts[s[axis]] += 1;
    }
    return { ...ch, points: sums.map((sum, i) => ({ i, f: counts[i] ? sum / counts[i] : 0 })) };
  });
  const top = Math.max(1e-6, ...lines.flatMap((l) => l.points.map((p) => p.f)));
  const x = scaleLinear<number>({ domain: [1, Math.max(2, n)], range: [M.left, W - M.right] });
  const y = scaleLinear<number>({ domain: [0, top], range: [H - M.bottom, M.top], nice: true });
  return (
    <svg viewBox={`0 0 ${W} ${H}`} className="w-full max-w-[520px]" role="img" aria-label={`Share of pixels at the ceiling over ${axis}`}>
      {lines.map((l) => (
        <LinePath key={l.c} data={l.points} x={(p) => x(p.i + 1)} y={(p) => y(p.f)} stroke={plotColour(l.colour)} strokeWidth={1.5} />
      ))}
      <AxisBottom top={H - M.bottom} scale={x} {...(n <= 12 ? { tickValues: Array.from({ length: n }, (_, i) => i + 1) } : { numTicks: 10 })} tickFormat={(v) => String(Math.round(Number(v)))} tickLabelProps={{ fontSize: 10, fill: "#45453f" }} stroke="#d0d0cc" tickStroke="#d0d0cc" label={axis === "t" ? "time point" : "z-slice"} labelProps={{ fontSize: 10, fill: "#45453f" }} />
      <AxisLeft left={M.left} scale={y} numTicks={4} tickFormat={(v) => pct(Number(v))} tickLabelProps={{ fontSize: 10, fill: "#45453f" }} stroke="#d0d0cc" tickStroke="#d0d0cc" />
    </svg>
  );
}

export function CheckReport({ labId, datasetId }: { labId: number; datasetId: number }) {
  const dataset = useDataset(datasetId);
  const check = useDatasetCheck(datasetId);
  if (dataset.isPending || check.isPending) return <Loading label="Checking the dataset…" />;
  if (dataset.isError) return <ErrorState error={dataset.error} retry={() => dataset.refetch()} />;
  if (check.isError) return <ErrorState error={check.error} retry={() => check.refetch()} />;
  const d = dataset.data.dataset;
  const { check: result, series, histograms } = check.data;
  const colours = result.channels.map((ch) => ({ c: ch.c, name: ch.name, colour: d.channels?.[ch.c]?.colour ?? "#6b6b66" }));
  return (
    <div className="space-y-6">
      <div>
        <Link href={`/labs/${labId}/checks`} className="text-sm text-flux-700 underline">
          ← Checks
        </Link>
        <h1 className="mt-1 flex flex-wrap items-center gap-3 text-xl font-semibold tracking-tight">
          Acquisition check: {d.title} <VerdictBadge verdict={result.verdict} />
        </h1>
        <p className="mt-1 text-sm text-paper-700">
          From the stored counts of every plane (never from a display mapping).{" "}
          {result.detector ? `Detector profile: ${result.detector.name}.` : "No detector profile is assigned to this dataset."}{" "}
          <Link href={`/labs/${labId}/datasets/${datasetId}`} className="text-flux-700 underline">
            Open on the bench
          </Link>{" "}
          ·{" "}
          <Link href={`/labs/${labId}/datasets/${datasetId}/details`} className="text-flux-700 underline">
            Dataset details
          </Link>
        </p>
      </div>
      {result.channels.map((ch) => {
        const hist = histograms.find((h) => h.c === ch.c)?.histogram;
        return (
          <section key={ch.c} className="rounded-md border border-paper-200 bg-white p-4 text-sm" aria-labelledby={`check-${ch.c}`}>
            <h2 id={`check-${ch.c}`} className="flex items-center gap-2 font-semibold">
              <span className="inline-block h-3 w-3 rounded-sm" style={{ background: colours[ch.c]?.colour }} aria-hidden />
              {ch.name} <VerdictBadge verdict={ch.verdict} />
            </h2>
            {ch.reasons.length > 0 && (
              <ul className="mt-2 list-disc pl-5 text-paper-900">
                {ch.reasons.map((r) => (
                  <li key={r}>{r}</li>
                ))}
              </ul>
            )}
            {ch.advice.length > 0 && (
              <div className="mt-2 rounded bg-paper-100 px-3 py-2">
                <span className="font-medium">Advice: </span>
                {ch.advice.join(" ")}
              </div>
            )}
            <div className="mt-3 grid gap-4 lg:grid-cols-[1fr_18rem]">
              <div>{hist ? <CheckHistogram hist={hist} ceiling={ch.ceiling} offset={ch.offset.dn} colour={colours[ch.c]?.colour ?? "#6b6b66"} name={ch.name} /> : <p>No stored histogram.</p>}</div>
              <dl className="grid grid-cols-[auto_1fr] content-start gap-x-3 gap-y-1 text-xs">
                <dt className="text-paper-700">Ceiling</dt>
                <dd className="num">
                  {ch.ceiling} DN <span className="font-sans text-paper-500">— {ch.ceilingFrom}</span>
                </dd>
                <dt className="text-paper-700">At ceiling</dt>
                <dd className={`num ${ch.saturated.count ? "font-semibold text-fault-700" : ""}`}>
                  {ch.saturated.count.toLocaleString()} px · {pct(ch.saturated.fraction)}
                  {ch.ceilingCountExact ? "" : " (not exact)"}
                </dd>
                <dt className="text-paper-700">At 0</dt>
                <dd className="num">
                  {ch.zero.count.toLocaleString()} px · {pct(ch.zero.fraction)}
                </dd>
                <dt className="text-paper-700">Offset</dt>
                <dd className="num">
                  {Math.round(ch.offset.dn)} DN <span className="font-sans text-paper-500">— {ch.offset.from}</span>
                </dd>
                <dt className="text-paper-700">Range use</dt>
                <dd className="num">{pct(ch.rangeUse)}</dd>
                <dt className="text-paper-700">Levels above noise</dt>
                <dd className="num">
                  {ch.effectiveLevels.count.toLocaleString()} {ch.effectiveLevels.unit} ({ch.effectiveLevels.bits.toFixed(1)} bits)
                </dd>
                <dt className="text-paper-700">Headroom</dt>
                <dd className="num">{ch.headroom === null ? "—" : `${ch.headroom.toFixed(2)}× the exposure`}</dd>
                {ch.photoelectrons && (
                  <>
                    <dt className="text-paper-700">99.99 % point</dt>
                    <dd className="num">
                      {Math.round(ch.photoelectrons.p9999).toLocaleString()} e⁻ · shot-noise SNR {ch.photoelectrons.snr.toFixed(1)}
                    </dd>
                  </>
                )}
              </dl>
            </div>
            {ch.notes.length > 0 && (
              <ul className="mt-2 text-xs text-paper-700">
                {ch.notes.map((n) => (
                  <li key={n}>{n}</li>
                ))}
              </ul>
            )}
          </section>
        );
      })}
      <section className="grid gap-4 rounded-md border border-paper-200 bg-white p-4 text-sm lg:grid-cols-2" aria-label="Saturation over time and depth">
        <div>
          <h2 className="mb-1 font-semibold">At the ceiling over t</h2>
          <SaturationPlot series={series} axis="t" channels={colours} />
        </div>
        <div>
          <h2 className="mb-1 font-semibold">At the ceiling over z</h2>
          <SaturationPlot series={series} axis="z" channels={colours} />
        </div>
        <p className="text-xs text-paper-700 lg:col-span-2">
          Lines: {colours.map((c) => c.name).join(", ")} in their channel colours; each point is the mean share over the other axis.
        </p>
      </section>
    </div>
  );
}
