"use client";

import { useMutation, useQuery, useQueryClient } from "@tanstack/react-query";
import type { ChannelCheck, CheckThresholds, DetectorInfo, Verdict } from "@/lib/imaging/acquisition-check";
import { api } from "./api";

export interface LabCheckRow {
  datasetId: number;
  title: string;
  lossy: boolean;
  createdAt: string;
  verdict: Verdict;
  channels: { c: number; name: string; verdict: Verdict; saturatedFraction: number; zeroFraction: number; rangeUse: number; headroom: number | null; reasons: string[] }[];
}

export interface DatasetCheckReply {
  check: { verdict: Verdict; channels: (Omit<ChannelCheck, "headroom"> & { headroom: number | null })[]; detector: DetectorInfo | null; thresholds: CheckThresholds };
  series: { c: number; z: number; t: number; saturated: number; zero: number }[];
  histograms: { c: number; histogram: { binWidth: number; counts: number[] } | null }[];
}

export function useLabChecks(labId: number) {
  return useQuery({ queryKey: ["labs", labId, "checks"], queryFn: () => api<{ thresholds: CheckThresholds; datasets: LabCheckRow[] }>(`/api/labs/${labId}/checks`) });
}

export function useDatasetCheck(datasetId: number) {
  return useQuery({ queryKey: ["datasets", datasetId, "check"], queryFn: () => api<DatasetCheckReply>(`/api/datasets/${datasetId}/check`) });
}

export function useSaveThresholds(labId: number) {
  const client = useQueryClient();
  return useMutation({
    mutationFn: (body: CheckThresholds) => api<{ thresholds: CheckThresholds }>(`/api/labs/${labId}/check-thresholds`, { method: "PUT", body }),
    onSuccess: () => {
      void client.invalidateQueries({ queryKey: ["labs", labId, "checks"] });
      void client.invalidateQueries({ queryKey: ["datasets"] });
    },
  });
}
