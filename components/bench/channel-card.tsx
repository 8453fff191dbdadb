"use client";

import { builtInTables } from "@/lib/imaging/colour-tables";
import type { ChannelPlaneStats } from "@/workers/bench-api";
import { HistogramPlot } from "./histogram-plot";

export interface ChannelState {
  c: number;
  name: string;
  colour: string;
  visible: boolean;
  black: number;
  white: number;
  /** 1 = linear. Anything else is a non-linear display mapping and is flagged on the image. */
  gamma: number;
  /** A built-in colour table, or null for a ramp from black to the channel colour. */
  tableId: string | null;
}

// Grey and the perceptually uniform tables; single-hue ramps come from the channel colour itself.
const tableChoices = builtInTables.filter((t) => t.kind !== "single-hue");

interface Props {
  channel: ChannelState;
  stats: ChannelPlaneStats | undefined;
  ceiling: number;
  pixelCount: number;
  log: boolean;
  range: "ceiling" | "data";
  onChange: (patch: Partial<ChannelState>) => void;
  onSolo: () => void;
  onFit: () => void;
  fitBusy: boolean;
  offset?: number | null;
  /** The lab's own colour tables ("custom-<id>", Colour tables page), offered after the built-in ones. */
  extraTables?: readonly { id: string; name: string }[];
}

const pct = (n: number, total: number) => (total ? `${((100 * n) / total).toFixed(3)} %` : "—");
const num = (v: number | undefined, digits = 0) => (v === undefined || Number.isNaN(v) ? "—" : v.toFixed(digits));

/** One channel's card on the bench: visibility, colour, histogram with handles, typed black/white points, Fit. */
export function ChannelCard({ channel, stats, ceiling, pixelCount, log, range, onChange, onSolo, onFit, fitBusy, offset, extraTables }: Props) {
  const id = `ch-${channel.c}`;
  // A table the list does not hold (deleted, or not loaded yet) stays selected and says so.
  const unknownTable = channel.tableId && !tableChoices.some((t) => t.id === channel.tableId) && !extraTables?.some((t) => t.id === channel.tableId);
  return (
    <section aria-label={`Channel ${channel.name}`} className="rounded border border-graphite-700 bg-graphite-900 p-3">
      <div className="flex items-center gap-2">
        <input
          id={`${id}-visible`}
          type="checkbox"
          checked={channel.visible}
          onChange={(e) => onChange({ visible: e.target.checked })}
          className="accent-flux-500"
        />
        <label htmlFor={`${id}-visible`} className="flex-1 truncate text-sm font-medium text-graphite-100">
          {channel.name}
        </label>
        <input
          type="color"
          aria-label={`Colour of ${channel.name}`}
          value={channel.colour}
          onChange={(e) => onChange({ colour: e.target.value })}
          className="h-6 w-8 cursor-pointer rounded border border-graphite-600 bg-transparent"
        />
        <button type="button" onClick={onSolo} className="rounded px-1.5 py-0.5 text-xs text-graphite-200 hover:bg-graphite-700">
          Solo
        </button>
      </div>
      {stats ? (
        <HistogramPlot
          hist={stats.hist}
          ceiling={ceiling}
          black={channel.black}
          white={channel.white}
          log={log}
          range={range}
          dataMin={stats.min}
          dataMax={stats.max}
          colour={channel.colour}
          label={channel.name}
          offset={stats.corrected ? null : offset}
          onChange={onChange}
        />
      ) : (
        <div className="h-24" aria-hidden />
      )}
      <div className="mt-1 flex items-end gap-2">
        <label className="flex flex-col text-[11px] text-graphite-200">
          Black point
          <input
            type="number"
            value={channel.black}
            min={0}
            max={channel.white - 1}
            onChange={(e) => Number.isFinite(e.target.valueAsNumber) && onChange({ black: Math.min(e.target.valueAsNumber, channel.white - 1) })}
            className="num mt-0.5 w-20 rounded border border-graphite-600 bg-graphite-950 px-1.5 py-0.5 text-right text-sm text-graphite-50"
          />
        </label>
        <label className="flex flex-col text-[11px] text-graphite-200">
          White point
          <input
            type="number"
            value={channel.white}
            min={channel.black + 1}
            max={ceiling}
            onChange={(e) => Number.isFinite(e.target.valueAsNumber) && onChange({ white: Math.max(e.target.valueAsNumber, channel.black + 1) })}
            className="num mt-0.5 w-20 rounded border border-graphite-600 bg-graphite-950 px-1.5 py-0.5 text-right text-sm text-graphite-50"
          />
        </label>
        <span className="text-[11px] text-graphite-300">DN</span>
        <span className="ml-auto flex gap-1">
          <button
            type="button"
            onClick={onFit}
            disabled={fitBusy}
            className="rounded bg-flux-700 px-2 py-1 text-xs font-medium text-white hover:bg-flux-600 disabled:opacity-60"
          >
            Fit
          </button>
          <button type="button" onClick={() => onChange({ black: 0, white: ceiling })} className="rounded px-2 py-1 text-xs text-graphite-200 hover:bg-graphite-700" title="Black 0, white at the ceiling">
            Full
          </button>
        </span>
      </div>
      <div className="mt-2 flex items-end gap-2">
        <label className="flex min-w-0 flex-1 flex-col text-[11px] text-graphite-200">
          Colour table
          <select
            value={channel.tableId ?? ""}
            onChange={(e) => onChange({ tableId: e.target.value || null })}
            className="mt-0.5 w-full min-w-0 rounded border border-graphite-600 bg-graphite-950 px-1 py-0.5 text-xs text-graphite-50"
          >
            <option value="">Ramp to channel colour</option>
            {tableChoices.map((t) => (
              <option key={t.id} value={t.id}>
                {t.name}
              </option>
            ))}
            {extraTables && extraTables.length > 0 && (
              <optgroup label="Lab colour tables">
                {extraTables.map((t) => (
                  <option key={t.id} value={t.id}>
                    {t.name}
                  </option>
                ))}
              </optgroup>
            )}
            {unknownTable && <option value={channel.tableId!}>Table not available ({channel.tableId})</option>}
          </select>
        </label>
        <label className="flex flex-col text-[11px] text-graphite-200">
          Gamma{channel.gamma !== 1 && <span className="text-[#ffd180]"> non-linear</span>}
          <input
            type="number"
            min={0.1}
            max={5}
            step={0.1}
            value={channel.gamma}
            onChange={(e) => Number.isFinite(e.target.valueAsNumber) && e.target.valueAsNumber > 0 && onChange({ gamma: Math.min(5, e.target.valueAsNumber) })}
            className="num mt-0.5 w-16 rounded border border-graphite-600 bg-graphite-950 px-1.5 py-0.5 text-right text-sm text-graphite-50"
          />
        </label>
      </div>
      {stats && (
        <p className="num mt-2 text-[11px] leading-relaxed text-graphite-200" aria-label={`Plane statistics of ${channel.name}`}>
          min {num(stats.min)} · max {num(stats.max)} · mean {num(stats.mean, 1)} · sd {num(stats.sd, 1)} · median {num(stats.median)}
          <br />
          <span className={stats.countAtCeiling ? "font-semibold text-[#ff8a80]" : ""}>at ceiling {pct(stats.countAtCeiling, pixelCount)}</span> · at 0{" "}
          {pct(stats.countAtZero, pixelCount)}
        </p>
      )}
    </section>
  );
}
