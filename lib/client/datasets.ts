"use client";

import { keepPreviousData, useMutation, useQuery, useQueryClient } from "@tanstack/react-query";
import type { DatasetOut, UpdateDatasetBody } from "@/lib/schemas/dataset";
import type { StatColumns } from "@/models/plane";
import type { Role } from "@/lib/permissions";
import { api } from "./api";

export interface DatasetList {
  datasets: DatasetOut[];
  total: number;
  page: number;
  pageSize: number;
  experiments: string[];
}

/** Statistics of one channel over the whole stack, as stored at ingest (the type only; no model code reaches the browser). */
export type ChannelStatOut = { c: number } & StatColumns;

const busy = (d: DatasetOut) => d.status === "queued" || d.status === "ingesting";

export function useDatasets(labId: number, query: Record<string, string>) {
  return useQuery({
    queryKey: ["labs", labId, "datasets", query],
    queryFn: () => api<DatasetList>(`/api/labs/${labId}/datasets?${new URLSearchParams(query)}`),
    placeholderData: keepPreviousData,
    // While anything is being ingested the table follows its progress.
    refetchInterval: (q) => (q.state.data?.datasets.some(busy) ? 1500 : false),
  });
}

export function useDataset(id: number, enabled = true) {
  return useQuery({
    enabled,
    queryKey: ["datasets", id],
    queryFn: () => api<{ dataset: DatasetOut; channelStats: ChannelStatOut[]; role: Role }>(`/api/datasets/${id}`),
    refetchInterval: (q) => (q.state.data && busy(q.state.data.dataset) ? 1500 : false),
  });
}

function useDatasetMutation<T>(id: number, run: (arg: T) => Promise<{ dataset: DatasetOut }>) {
  const client = useQueryClient();
  return useMutation({
    mutationFn: run,
    onSuccess: () => {
      void client.invalidateQueries({ queryKey: ["datasets", id] });
      void client.invalidateQueries({ queryKey: ["labs"] });
    },
  });
}

export const useUpdateDataset = (id: number) =>
  useDatasetMutation(id, (body: UpdateDatasetBody) => api<{ dataset: DatasetOut }>(`/api/datasets/${id}`, { method: "PATCH", body }));
export const useDeleteDataset = (id: number) => useDatasetMutation(id, () => api<{ dataset: DatasetOut }>(`/api/datasets/${id}`, { method: "DELETE" }));
export const useRestoreDataset = (id: number) => useDatasetMutation(id, () => api<{ dataset: DatasetOut }>(`/api/datasets/${id}/restore`, { method: "POST", body: {} }));

export function useVerifyDataset(id: number) {
  return useMutation({
    mutationFn: () => api<{ match: boolean; expected: string; actual: string; checkedAt: string }>(`/api/datasets/${id}/verify`, { method: "POST", body: {} }),
  });
}

export function formatBytes(bytes: number): string {
  const units = ["B", "KiB", "MiB", "GiB", "TiB"];
  let value = bytes;
  let unit = 0;
  while (value >= 1024 && unit < units.length - 1) {
    value /= 1024;
    unit++;
  }
  return `${value.toFixed(unit === 0 ? 0 : value < 10 ? 2 : 1)} ${units[unit]}`;
}

export function formatDuration(seconds: number | null): string {
  if (seconds === null || !Number.isFinite(seconds)) return "—";
  if (seconds < 60) return `${Math.ceil(seconds)} s`;
  if (seconds < 3600) return `${Math.floor(seconds / 60)} min ${Math.ceil(seconds % 60)} s`;
  return `${Math.floor(seconds / 3600)} h ${Math.round((seconds % 3600) / 60)} min`;
}
