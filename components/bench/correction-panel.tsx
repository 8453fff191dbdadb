"use client";

import { useQuery } from "@tanstack/react-query";
import { api } from "@/lib/client/api";
import type { DatasetList } from "@/lib/client/datasets";

export interface CorrectionChoice {
  flatId: number | null;
  darkId: number | null;
  on: boolean;
}

interface Props {
  labId: number;
  datasetId: number;
  width: number;
  height: number;
  value: CorrectionChoice;
  status: string | null;
  onChange: (next: CorrectionChoice) => void;
}

/**
 * Flat-field and dark frame for display correction: single-plane datasets of the lab with the same
 * width and height. The correction changes what is drawn only; nothing is written back.
 */
export function CorrectionPanel({ labId, datasetId, width, height, value, status, onChange }: Props) {
  const candidates = useQuery({
    queryKey: ["labs", labId, "datasets", "frames", width, height],
    queryFn: async () => (await api<DatasetList>(`/api/labs/${labId}/datasets?status=ready&pageSize=100`)).datasets,
    select: (list) => list.filter((d) => d.id !== datasetId && d.planeCount === 1 && d.width === width && d.height === height),
  });
  const options = candidates.data ?? [];
  const pick = (label: string, key: "flatId" | "darkId") => (
    <label className="flex min-w-0 flex-1 flex-col text-[11px] text-graphite-200">
      {label}
      <select
        aria-label={label}
        value={value[key] ?? ""}
        onChange={(e) => onChange({ ...value, [key]: e.target.value ? Number(e.target.value) : null, on: false })}
        className="mt-0.5 w-full min-w-0 rounded border border-graphite-600 bg-graphite-950 px-1 py-0.5 text-xs text-graphite-50"
      >
        <option value="">none</option>
        {options.map((d) => (
          <option key={d.id} value={d.id}>
            {d.title}
          </option>
        ))}
      </select>
    </label>
  );
  return (
    <section aria-label="Flat and dark correction" className="rounded border border-graphite-700 bg-graphite-900 p-3 text-xs">
      <h2 className="mb-1 font-semibold text-graphite-100">Flat/dark correction (display only)</h2>
      {options.length === 0 ? (
        <p className="text-graphite-300">
          No single-plane {width} × {height} dataset in this lab to use as a flat-field or dark frame.
        </p>
      ) : (
        <>
          <div className="flex gap-2">
            {pick("Flat-field frame", "flatId")}
            {pick("Dark frame", "darkId")}
          </div>
          <label className="mt-2 flex items-center gap-1 text-graphite-100">
            <input
              type="checkbox"
              checked={value.on}
              disabled={value.flatId === null || value.darkId === null}
              onChange={(e) => onChange({ ...value, on: e.target.checked })}
              className="accent-flux-500"
            />
            Apply (raw − dark) / (flat − dark) × mean(flat − dark)
          </label>
          {status && <p className="mt-1 text-graphite-300">{status}</p>}
        </>
      )}
    </section>
  );
}
