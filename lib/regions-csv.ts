// Tidy CSV rows for region measurements: one row per region × channel × plane, the statistics as
// columns, and the unit in its own column (Wickham 2014, "Tidy Data": one observation per row).
import type { RegionStats } from "./imaging/regions";
import { toCsv, type CsvValue } from "./csv";

export const PLANE_COLUMNS = ["dataset", "region", "channel", "z", "t", "time_s", "area_px", "area_um2", "mean", "sd", "min", "max", "sum", "count_at_ceiling", "unit"] as const;
export const TRACE_COLUMNS = ["dataset", "region", "channel", "z", "t", "time_s", "area_px", "mean", "sum", "background_mean", "count_at_ceiling", "unit"] as const;

/** Seconds since the first time point, or empty when the dataset states no time increment. */
const timeOf = (t: number, timeIncrement: number | null | undefined): CsvValue => (timeIncrement == null ? null : t * timeIncrement);

export interface PlaneMeasurement {
  region: string;
  channel: string;
  stats: RegionStats;
}

export function planeCsv(dataset: string, z: number, t: number, timeIncrement: number | null | undefined, unit: string, rows: readonly PlaneMeasurement[]): string {
  return toCsv(
    PLANE_COLUMNS,
    rows.map((r) => ({
      dataset,
      region: r.region,
      channel: r.channel,
      z,
      t,
      time_s: timeOf(t, timeIncrement),
      area_px: r.stats.areaPx,
      area_um2: r.stats.areaUm2,
      mean: r.stats.mean,
      sd: r.stats.sd,
      min: r.stats.min,
      max: r.stats.max,
      sum: r.stats.sum,
      count_at_ceiling: r.stats.countAtCeiling,
      unit,
    })),
  );
}

export interface TraceForCsv {
  areaPx: number;
  unit: string;
  points: { z: number; t: number; channels: { c: number; mean: number; sum: number; background: number | null; countAtCeiling: number }[] }[];
}

export function traceCsv(dataset: string, region: string, channelName: (c: number) => string, timeIncrement: number | null | undefined, trace: TraceForCsv): string {
  const rows: Record<string, CsvValue>[] = [];
  for (const p of trace.points) {
    for (const ch of p.channels) {
      rows.push({
        dataset,
        region,
        channel: channelName(ch.c),
        z: p.z,
        t: p.t,
        time_s: timeOf(p.t, timeIncrement),
        area_px: trace.areaPx,
        mean: ch.mean,
        sum: ch.sum,
        background_mean: ch.background,
        count_at_ceiling: ch.countAtCeiling,
        unit: trace.unit,
      });
    }
  }
  return toCsv(TRACE_COLUMNS, rows);
}
