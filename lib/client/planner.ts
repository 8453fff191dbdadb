"use client";

import { useQuery } from "@tanstack/react-query";
import type { CompressionOut } from "@/lib/schemas/planner";
import { api } from "./api";

/** Compression achieved on the lab's ready datasets, per codec (GET /api/labs/:lab/datasets/compression). */
export function useCompression(labId: number) {
  return useQuery({
    queryKey: ["labs", labId, "datasets", "compression"],
    queryFn: () => api<CompressionOut>(`/api/labs/${labId}/datasets/compression`),
  });
}
