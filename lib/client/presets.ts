"use client";

import { useMutation, useQuery, useQueryClient } from "@tanstack/react-query";
import type { CreatePresetBody, PresetChannel, PresetOut } from "@/lib/schemas/preset";
import type { ImportPresetsBody } from "@/lib/schemas/preset-file";
import { api } from "./api";

const key = (labId: number) => ["labs", labId, "presets"] as const;

export function usePresets(labId: number, enabled = true) {
  return useQuery({ enabled, queryKey: key(labId), queryFn: async () => (await api<{ presets: PresetOut[] }>(`/api/labs/${labId}/presets`)).presets });
}

function useInvalidating<T, R>(labId: number, run: (arg: T) => Promise<R>) {
  const client = useQueryClient();
  return useMutation({ mutationFn: run, onSettled: () => client.invalidateQueries({ queryKey: key(labId) }) });
}

export const useCreatePreset = (labId: number) =>
  useInvalidating(labId, async (body: CreatePresetBody) => (await api<{ preset: PresetOut }>(`/api/labs/${labId}/presets`, { body })).preset);
export const useRenamePreset = (labId: number) =>
  useInvalidating(labId, async ({ id, version, name }: { id: number; version: number; name: string }) =>
    (await api<{ preset: PresetOut }>(`/api/labs/${labId}/presets/${id}`, { method: "PATCH", body: { version, name } })).preset,
  );
export const useDeletePreset = (labId: number) => useInvalidating(labId, (id: number) => api(`/api/labs/${labId}/presets/${id}`, { method: "DELETE" }));
/** The preset as stored now (after a 409 on save, to show the other person's version). */
export const fetchPreset = async (labId: number, id: number) => (await api<{ preset: PresetOut }>(`/api/labs/${labId}/presets/${id}`)).preset;

/** Download address of a presets file: every preset the person can see, or only `ids`. */
export const presetsExportUrl = (labId: number, ids?: readonly number[]) =>
  `/api/labs/${labId}/presets/export${ids && ids.length ? `?ids=${ids.join(",")}` : ""}`;

export interface ImportOutcome {
  imported: PresetOut[];
  renamed: { from: string; to: string }[];
}
export const useImportPresets = (labId: number) =>
  useInvalidating(labId, (body: ImportPresetsBody) => api<ImportOutcome>(`/api/labs/${labId}/presets/import`, { body }));

export const useDuplicatePreset = (labId: number) =>
  useInvalidating(labId, async (id: number) => (await api<{ preset: PresetOut }>(`/api/labs/${labId}/presets/${id}/duplicate`, { method: "POST", body: {} })).preset);

export interface DatasetChannelRef {
  c: number;
  name: string;
  emissionNm: number | null;
}

/**
 * Which dataset channel each preset channel applies to: same name first, then same emission
 * wavelength, then the same index. Returns the pairs and the preset channels that found none.
 */
export function matchPresetChannels(preset: readonly PresetChannel[], dataset: readonly DatasetChannelRef[]) {
  const taken = new Set<number>();
  const pairs: { preset: PresetChannel; c: number; by: "name" | "emission" | "index" }[] = [];
  const unmatched: PresetChannel[] = [];
  for (const ch of preset) {
    const free = dataset.filter((d) => !taken.has(d.c));
    const byName = ch.match.name ? free.find((d) => d.name.toLowerCase() === ch.match.name!.toLowerCase()) : undefined;
    const byEmission = !byName && ch.match.emissionNm ? free.find((d) => d.emissionNm === ch.match.emissionNm) : undefined;
    const byIndex = !byName && !byEmission ? free.find((d) => d.c === ch.match.index) : undefined;
    const hit = byName ?? byEmission ?? byIndex;
    if (!hit) {
      unmatched.push(ch);
      continue;
    }
    taken.add(hit.c);
    pairs.push({ preset: ch, c: hit.c, by: byName ? "name" : byEmission ? "emission" : "index" });
  }
  return { pairs, unmatched };
}
