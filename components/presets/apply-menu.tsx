"use client";

import { useRouter } from "next/navigation";
import { useDatasets } from "@/lib/client/datasets";

/**
 * "Apply to…": opens a ready dataset on the bench with this preset applied there (channels matched by
 * name, then emission wavelength, then position; the bench says how each was matched).
 */
export function ApplyMenu({ labId, presetId, presetName }: { labId: number; presetId: number; presetName: string }) {
  const router = useRouter();
  const datasets = useDatasets(labId, { status: "ready", pageSize: "100", sort: "createdAt", dir: "desc" });
  return (
    <select
      aria-label={`Apply ${presetName} to a dataset`}
      value=""
      disabled={!datasets.data?.datasets.length}
      onChange={(e) => e.target.value && router.push(`/labs/${labId}/datasets/${e.target.value}?preset=${presetId}`)}
      className="max-w-36 rounded border border-paper-300 bg-white px-1 py-1 text-xs"
    >
      <option value="">{datasets.isPending ? "Loading…" : datasets.data?.datasets.length ? "Apply to…" : "No dataset to apply to"}</option>
      {datasets.data?.datasets.map((d) => (
        <option key={d.id} value={d.id}>
          {d.title}
        </option>
      ))}
    </select>
  );
}
