"use client";

import { useMutation, useQuery, useQueryClient } from "@tanstack/react-query";
import { useEffect, useMemo, useState } from "react";
import { hexStringToRgb } from "@/lib/imaging/table-editor";
import type { ColourTableOut, CreateColourTableBody, ImportColourTableBody, UpdateColourTableBody } from "@/lib/schemas/colour-table";
import { api } from "./api";
import type { BenchWorkerClient } from "./use-bench-worker";

const key = (labId: number) => ["labs", labId, "colour-tables"] as const;

/** The lab's shared tables, the caller's private ones and every lab's public ones. */
export function useColourTables(labId: number, enabled = true) {
  return useQuery({ queryKey: key(labId), enabled, queryFn: async () => (await api<{ tables: ColourTableOut[] }>(`/api/labs/${labId}/colour-tables`)).tables });
}

function useInvalidating<T, R>(labId: number, run: (arg: T) => Promise<R>) {
  const client = useQueryClient();
  return useMutation({ mutationFn: run, onSettled: () => client.invalidateQueries({ queryKey: key(labId) }) });
}

export const useCreateColourTable = (labId: number) =>
  useInvalidating(labId, async (body: CreateColourTableBody) => (await api<{ table: ColourTableOut }>(`/api/labs/${labId}/colour-tables`, { body })).table);
export const useUpdateColourTable = (labId: number) =>
  useInvalidating(labId, async ({ id, ...body }: UpdateColourTableBody & { id: number }) =>
    (await api<{ table: ColourTableOut }>(`/api/labs/${labId}/colour-tables/${id}`, { method: "PATCH", body })).table,
  );
export const useDeleteColourTable = (labId: number) => useInvalidating(labId, (id: number) => api(`/api/labs/${labId}/colour-tables/${id}`, { method: "DELETE" }));
export const useImportColourTable = (labId: number) =>
  useInvalidating(labId, async (body: ImportColourTableBody) => (await api<{ table: ColourTableOut }>(`/api/labs/${labId}/colour-tables/import`, { body })).table);

export const exportUrl = (labId: number, id: number, format: "csv" | "json") => `/api/labs/${labId}/colour-tables/${id}/export?format=${format}`;

/** The bench's id for a custom table (workers/bench-api.ts registerCustomTables). */
export const benchTableId = (id: number) => `custom-${id}`;

/**
 * The lab's colour tables for the bench: registered in its worker once a dataset is open, and
 * offered in the channel cards as "custom-<id>". `registered` changes when a registration has
 * reached the worker, so the bench can draw again with the table (a render posted before it would
 * have fallen back to the channel's ramp). Off for view-link guests, who are not lab members.
 */
export function useBenchColourTables(labId: number, bench: BenchWorkerClient, opened: boolean, enabled = true) {
  const tables = useColourTables(labId, enabled);
  const [registered, setRegistered] = useState("");
  const extraTables = useMemo(() => (tables.data ?? []).map((t) => ({ id: benchTableId(t.id), name: t.name })), [tables.data]);
  useEffect(() => {
    if (!opened || !tables.data?.length) return;
    const done = tables.data.map((t) => `${t.id}:${t.version}`).join(",");
    let stale = false;
    bench
      .registerTables(tables.data.map((t) => ({ id: benchTableId(t.id), name: t.name, rgb: hexStringToRgb(t.rgb) })))
      .then(() => !stale && setRegistered(done))
      // Without them a channel naming a custom table shows its colour ramp, as for an unknown table.
      .catch(() => undefined);
    return () => {
      stale = true;
    };
  }, [bench, opened, tables.data]);
  // The same tables as the worker holds, for choices made on the main thread (clipping-mark colours).
  const byId = useMemo(
    () => new Map((tables.data ?? []).map((t) => [benchTableId(t.id), { id: benchTableId(t.id), name: t.name, kind: "perceptual" as const, rgb: hexStringToRgb(t.rgb) }])),
    [tables.data],
  );
  return { extraTables, registered, byId };
}
