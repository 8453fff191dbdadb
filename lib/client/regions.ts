"use client";

import { useMutation, useQuery, useQueryClient } from "@tanstack/react-query";
import type { CreateRegionBody, RegionOut } from "@/lib/schemas/region";
import type { RegionShape } from "@/lib/imaging/regions";
import { api } from "./api";

// Regions of a dataset (GET/POST /api/datasets/:id/regions, PATCH/DELETE …/:regionId).

const key = (datasetId: number) => ["datasets", datasetId, "regions"];

export function useRegions(datasetId: number, enabled: boolean) {
  return useQuery({
    queryKey: key(datasetId),
    queryFn: async () => (await api<{ regions: RegionOut[] }>(`/api/datasets/${datasetId}/regions`)).regions,
    enabled,
  });
}

export function useRegionMutations(datasetId: number) {
  const client = useQueryClient();
  const replace = (region: RegionOut) => client.setQueryData<RegionOut[]>(key(datasetId), (all) => (all ?? []).map((r) => (r.id === region.id ? region : r)));
  const create = useMutation({
    mutationFn: async (body: CreateRegionBody) => (await api<{ region: RegionOut }>(`/api/datasets/${datasetId}/regions`, { body })).region,
    onSuccess: (region) => client.setQueryData<RegionOut[]>(key(datasetId), (all) => [...(all ?? []), region]),
  });
  const update = useMutation({
    mutationFn: async ({ id, ...body }: { id: number; version: number; name?: string; geometry?: Record<string, unknown>; colour?: string }) =>
      (await api<{ region: RegionOut }>(`/api/datasets/${datasetId}/regions/${id}`, { method: "PATCH", body })).region,
    onSuccess: replace,
    // A stale version (409) or any failure: show what the server has now.
    onError: () => void client.invalidateQueries({ queryKey: key(datasetId) }),
  });
  const remove = useMutation({
    mutationFn: async (id: number) => {
      await api(`/api/datasets/${datasetId}/regions/${id}`, { method: "DELETE" });
      return id;
    },
    onSuccess: (id) => client.setQueryData<RegionOut[]>(key(datasetId), (all) => (all ?? []).filter((r) => r.id !== id)),
  });
  return { create, update, remove };
}

/** A stored region as the shape lib/imaging/regions.ts measures. */
export function shapeOf(region: Pick<RegionOut, "kind" | "geometry">): RegionShape {
  return { kind: region.kind, ...region.geometry } as RegionShape;
}

/** The geometry part of a shape (what the API stores). */
export function geometryOfShape(shape: RegionShape): Record<string, unknown> {
  const { kind: _kind, ...geometry } = shape;
  void _kind;
  return geometry;
}

/** Moves a shape by whole pixels. */
export function moveShape(shape: RegionShape, dx: number, dy: number): RegionShape {
  switch (shape.kind) {
    case "rect":
      return { ...shape, x: shape.x + dx, y: shape.y + dy };
    case "ellipse":
      return { ...shape, cx: shape.cx + dx, cy: shape.cy + dy };
    case "polygon":
      return { ...shape, points: shape.points.map(([x, y]) => [x + dx, y + dy] as [number, number]) };
    case "line":
      return { ...shape, x1: shape.x1 + dx, y1: shape.y1 + dy, x2: shape.x2 + dx, y2: shape.y2 + dy };
  }
}
