"use client";

import { useMutation, useQuery, useQueryClient } from "@tanstack/react-query";
import type { CreateDetectorProfileBody, DetectorProfileOut, PhotonTransferOut, UpdateDetectorProfileBody } from "@/lib/schemas/detector-profile";
import { api } from "./api";

const key = (labId: number) => ["labs", labId, "detector-profiles"] as const;

/** The lab's detector profiles, by name. */
export function useDetectorProfiles(labId: number, enabled = true) {
  return useQuery({ queryKey: key(labId), enabled, queryFn: async () => (await api<{ profiles: DetectorProfileOut[] }>(`/api/labs/${labId}/detector-profiles`)).profiles });
}

function useInvalidating<T, R>(labId: number, run: (arg: T) => Promise<R>) {
  const client = useQueryClient();
  return useMutation({
    mutationFn: run,
    // Awaited, so the list already shows the change when the caller says it is done. Datasets carry
    // their profile's numbers (the bench readout), so they are read again too.
    onSettled: () => Promise.all([client.invalidateQueries({ queryKey: key(labId) }), client.invalidateQueries({ queryKey: ["datasets"] })]),
  });
}

// The body's input type: `source` may be left out (it defaults to "manual").
type CreateInput = Omit<CreateDetectorProfileBody, "source"> & { source?: CreateDetectorProfileBody["source"] };

export const useCreateDetectorProfile = (labId: number) =>
  useInvalidating(labId, async (body: CreateInput) => (await api<{ profile: DetectorProfileOut }>(`/api/labs/${labId}/detector-profiles`, { body })).profile);
export const useUpdateDetectorProfile = (labId: number) =>
  useInvalidating(labId, async ({ id, ...body }: UpdateDetectorProfileBody & { id: number }) =>
    (await api<{ profile: DetectorProfileOut }>(`/api/labs/${labId}/detector-profiles/${id}`, { method: "PATCH", body })).profile,
  );
export const useDeleteDetectorProfile = (labId: number) => useInvalidating(labId, (id: number) => api(`/api/labs/${labId}/detector-profiles/${id}`, { method: "DELETE" }));

/** Runs the photon-transfer fit of a dataset on the server; nothing is saved. */
export function usePhotonTransfer() {
  return useMutation({
    mutationFn: ({ datasetId, c }: { datasetId: number; c: number }) => api<PhotonTransferOut>(`/api/datasets/${datasetId}/photon-transfer`, { body: { c } }),
  });
}
