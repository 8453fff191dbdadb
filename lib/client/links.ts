"use client";

import { useMutation, useQuery, useQueryClient } from "@tanstack/react-query";
import type { DatasetOut } from "@/lib/schemas/dataset";
import type { ViewStateBody } from "@/lib/schemas/preset";
import type { CreateLinkBody, LinkAccessChoice, LinkOut, SavedViewOut } from "@/lib/schemas/view-link";
import type { Role } from "@/lib/permissions";
import { api } from "./api";
import type { ChannelStatOut } from "./datasets";

/** What GET /api/v/[token] answers: the snapshot and the dataset's viewing metadata. */
export interface LinkViewData {
  link: { access: LinkAccessChoice; allowDownload: boolean; expiresAt: string | null; state: ViewStateBody };
  dataset: DatasetOut;
  channelStats: ChannelStatOut[];
  viewer: { name: string; role: Role | null; canSaveAsMine: boolean } | null;
}

export interface CreatedLink {
  link: LinkOut;
  token: string;
  url: string;
  sent: string[];
  failed: string[];
}

const linksKey = (datasetId: number) => ["datasets", datasetId, "links"] as const;
const viewsKey = (datasetId: number) => ["datasets", datasetId, "saved-views"] as const;

export function useLinks(datasetId: number, enabled = true) {
  return useQuery({ queryKey: linksKey(datasetId), queryFn: async () => (await api<{ links: LinkOut[] }>(`/api/datasets/${datasetId}/links`)).links, enabled });
}

export function useCreateLink(datasetId: number) {
  const client = useQueryClient();
  return useMutation({
    // The input type, before zod's defaults: expiry and download are filled in by the server when left out.
    mutationFn: (body: Omit<CreateLinkBody, "expiresInDays" | "allowDownload"> & Partial<Pick<CreateLinkBody, "expiresInDays" | "allowDownload">>) =>
      api<CreatedLink>(`/api/datasets/${datasetId}/links`, { body }),
    onSettled: () => client.invalidateQueries({ queryKey: linksKey(datasetId) }),
  });
}

export function useRevokeLink(datasetId: number) {
  const client = useQueryClient();
  return useMutation({
    mutationFn: (linkId: number) => api<{ link: LinkOut }>(`/api/datasets/${datasetId}/links/${linkId}`, { method: "DELETE" }),
    onSettled: () => client.invalidateQueries({ queryKey: linksKey(datasetId) }),
  });
}

export function useSavedViews(datasetId: number, enabled = true) {
  return useQuery({ queryKey: viewsKey(datasetId), queryFn: async () => (await api<{ views: SavedViewOut[] }>(`/api/datasets/${datasetId}/saved-views`)).views, enabled });
}

export function useCreateSavedView(datasetId: number) {
  const client = useQueryClient();
  return useMutation({
    mutationFn: async (body: { name: string; state: ViewStateBody }) => (await api<{ view: SavedViewOut }>(`/api/datasets/${datasetId}/saved-views`, { body })).view,
    onSettled: () => client.invalidateQueries({ queryKey: viewsKey(datasetId) }),
  });
}

export function useDeleteSavedView(datasetId: number) {
  const client = useQueryClient();
  return useMutation({
    mutationFn: (viewId: number) => api(`/api/datasets/${datasetId}/saved-views/${viewId}`, { method: "DELETE" }),
    onSettled: () => client.invalidateQueries({ queryKey: viewsKey(datasetId) }),
  });
}
