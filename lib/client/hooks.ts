"use client";

import { useMutation, useQuery, useQueryClient } from "@tanstack/react-query";
import type { UserOut } from "@/lib/schemas/account";
import type { AuditEventOut, InvitationOut, LabOut, MemberOut } from "@/lib/schemas/lab";
import type { Role } from "@/lib/permissions";
import { api } from "./api";

export const keys = {
  me: ["me"] as const,
  labs: ["labs"] as const,
  lab: (id: number) => ["labs", id] as const,
  members: (id: number) => ["labs", id, "members"] as const,
  invitations: (id: number) => ["labs", id, "invitations"] as const,
  audit: (id: number, action: string) => ["labs", id, "audit", action] as const,
};

export function useMe() {
  return useQuery({ queryKey: keys.me, queryFn: () => api<{ user: UserOut; labs: LabOut[] }>("/api/me") });
}

export function useLabs() {
  return useQuery({ queryKey: keys.labs, queryFn: async () => (await api<{ labs: LabOut[] }>("/api/labs")).labs });
}

export function useCreateLab() {
  const client = useQueryClient();
  return useMutation({
    mutationFn: async (name: string) => (await api<{ lab: LabOut }>("/api/labs", { body: { name } })).lab,
    onSuccess: () => client.invalidateQueries({ queryKey: keys.labs }),
  });
}

export function useRenameLab(labId: number) {
  const client = useQueryClient();
  return useMutation({
    mutationFn: async (name: string) => (await api<{ lab: LabOut }>(`/api/labs/${labId}`, { method: "PATCH", body: { name } })).lab,
    onSuccess: () => client.invalidateQueries({ queryKey: keys.labs }),
  });
}

export function useMembers(labId: number) {
  return useQuery({
    queryKey: keys.members(labId),
    queryFn: async () => (await api<{ members: MemberOut[] }>(`/api/labs/${labId}/members`)).members,
  });
}

export function useChangeRole(labId: number) {
  const client = useQueryClient();
  return useMutation({
    mutationFn: ({ userId, role }: { userId: number; role: Role }) =>
      api(`/api/labs/${labId}/members/${userId}`, { method: "PATCH", body: { role } }),
    onSettled: () => client.invalidateQueries({ queryKey: keys.members(labId) }),
  });
}

export function useRemoveMember(labId: number) {
  const client = useQueryClient();
  return useMutation({
    mutationFn: (userId: number) => api(`/api/labs/${labId}/members/${userId}`, { method: "DELETE" }),
    onSettled: () => client.invalidateQueries({ queryKey: keys.members(labId) }),
  });
}

export function useInvitations(labId: number, enabled = true) {
  return useQuery({
    queryKey: keys.invitations(labId),
    enabled,
    queryFn: async () => (await api<{ invitations: InvitationOut[] }>(`/api/labs/${labId}/invitations`)).invitations,
  });
}

export function useInvite(labId: number) {
  const client = useQueryClient();
  return useMutation({
    mutationFn: async (body: { email: string; role: Role }) =>
      (await api<{ invitation: InvitationOut }>(`/api/labs/${labId}/invitations`, { body })).invitation,
    onSuccess: () => client.invalidateQueries({ queryKey: keys.invitations(labId) }),
  });
}

export function useRevokeInvitation(labId: number) {
  const client = useQueryClient();
  return useMutation({
    mutationFn: (id: number) => api(`/api/labs/${labId}/invitations/${id}`, { method: "DELETE" }),
    onSettled: () => client.invalidateQueries({ queryKey: keys.invitations(labId) }),
  });
}

export function useAuditLog(labId: number, action: string) {
  return useQuery({
    queryKey: keys.audit(labId, action),
    queryFn: async () =>
      (await api<{ events: AuditEventOut[] }>(`/api/labs/${labId}/audit?${new URLSearchParams(action ? { action } : {})}`)).events,
  });
}
