"use client";

import { zodResolver } from "@hookform/resolvers/zod";
import type { ColumnDef } from "@tanstack/react-table";
import { useMemo, useState } from "react";
import { useForm } from "react-hook-form";
import type { z } from "zod";
import { Button } from "@/components/ui/button";
import { DataTable } from "@/components/ui/data-table";
import { FormError, SelectField, TextField } from "@/components/ui/field";
import { EmptyState, ErrorState, Loading, PageHeader } from "@/components/ui/states";
import { ApiError } from "@/lib/client/api";
import { useChangeRole, useInvitations, useInvite, useMembers, useRemoveMember, useRevokeInvitation } from "@/lib/client/hooks";
import { can, roleLabels, roles, type Role } from "@/lib/permissions";
import { createInvitationBody, type InvitationOut, type MemberOut } from "@/lib/schemas/lab";

const date = (iso: string) => iso.slice(0, 10);

function InviteForm({ labId }: { labId: number }) {
  const invite = useInvite(labId);
  const [sentTo, setSentTo] = useState<string | null>(null);
  const form = useForm<z.input<typeof createInvitationBody>, unknown, z.output<typeof createInvitationBody>>({
    resolver: zodResolver(createInvitationBody),
    defaultValues: { email: "", role: "viewer" },
  });
  const onSubmit = form.handleSubmit(async (body) => {
    setSentTo(null);
    try {
      await invite.mutateAsync(body);
      setSentTo(body.email);
      form.reset({ email: "", role: body.role });
    } catch (error) {
      if (error instanceof ApiError && error.fields.email) form.setError("email", { message: error.fields.email });
    }
  });
  return (
    <form onSubmit={onSubmit} noValidate aria-label="Invite a member" className="rounded-md border border-paper-200 bg-white p-4">
      <h2 className="mb-3 text-sm font-semibold">Invite someone</h2>
      <div className="flex flex-wrap items-start gap-3">
        <div className="min-w-64 flex-1">
          <TextField label="E-mail address" type="email" error={form.formState.errors.email?.message} {...form.register("email")} />
        </div>
        <div className="w-40">
          <SelectField label="Role" error={form.formState.errors.role?.message} {...form.register("role")}>
            {roles.map((r) => (
              <option key={r} value={r}>
                {roleLabels[r]}
              </option>
            ))}
          </SelectField>
        </div>
        <div className="pt-6">
          <Button type="submit" busy={invite.isPending}>
            Send invitation
          </Button>
        </div>
      </div>
      <p className="mt-2 text-xs text-paper-700">
        The link works once, only for that address, and expires after 7 days. Viewers read; editors also upload, edit and share; owners manage members and settings.
      </p>
      {sentTo && (
        <p role="status" className="mt-2 text-sm text-ok-700">
          Invitation sent to {sentTo}.
        </p>
      )}
      {invite.error && !(invite.error instanceof ApiError && invite.error.fields.email) && <FormError message={invite.error.message} />}
    </form>
  );
}

function InvitationsTable({ labId }: { labId: number }) {
  const invitations = useInvitations(labId);
  const revoke = useRevokeInvitation(labId);
  const columns = useMemo<ColumnDef<InvitationOut, unknown>[]>(
    () => [
      { accessorKey: "email", header: "E-mail" },
      { accessorKey: "role", header: "Role", cell: ({ row }) => roleLabels[row.original.role] },
      { accessorKey: "status", header: "Status" },
      { accessorKey: "invitedBy", header: "Invited by" },
      { accessorKey: "expiresAt", header: "Expires", cell: ({ row }) => <span className="num">{date(row.original.expiresAt)}</span> },
      {
        id: "actions",
        header: () => <span className="sr-only">Actions</span>,
        cell: ({ row }) =>
          row.original.status === "pending" ? (
            <Button variant="ghost" onClick={() => revoke.mutate(row.original.id)} aria-label={`Withdraw invitation for ${row.original.email}`}>
              Withdraw
            </Button>
          ) : null,
      },
    ],
    [revoke],
  );
  if (invitations.isPending) return <Loading label="Loading invitations…" />;
  if (invitations.isError) return <ErrorState error={invitations.error} retry={() => invitations.refetch()} />;
  if (invitations.data.length === 0) return <p className="text-sm text-paper-700">No invitations sent yet.</p>;
  return <DataTable data={invitations.data} columns={columns} caption="Invitations" />;
}

export function MembersPanel({ labId, role, currentUserId }: { labId: number; role: Role; currentUserId: number }) {
  const members = useMembers(labId);
  const changeRole = useChangeRole(labId);
  const remove = useRemoveMember(labId);
  const manage = can(role, "members.changeRole");
  const mutationError = changeRole.error ?? remove.error;

  const columns = useMemo<ColumnDef<MemberOut, unknown>[]>(
    () => [
      { accessorKey: "name", header: "Name" },
      { accessorKey: "email", header: "E-mail" },
      {
        accessorKey: "role",
        header: "Role",
        cell: ({ row }) =>
          manage ? (
            <select
              aria-label={`Role of ${row.original.name}`}
              value={row.original.role}
              onChange={(e) => changeRole.mutate({ userId: row.original.userId, role: e.target.value as Role })}
              className="rounded border border-paper-300 bg-white px-2 py-1 text-sm"
            >
              {roles.map((r) => (
                <option key={r} value={r}>
                  {roleLabels[r]}
                </option>
              ))}
            </select>
          ) : (
            roleLabels[row.original.role]
          ),
      },
      { accessorKey: "joinedAt", header: "Joined", cell: ({ row }) => <span className="num">{date(row.original.joinedAt)}</span> },
      {
        id: "actions",
        header: () => <span className="sr-only">Actions</span>,
        cell: ({ row }) =>
          manage && row.original.userId !== currentUserId ? (
            <Button
              variant="danger"
              onClick={() => {
                if (window.confirm(`Remove ${row.original.name} from this lab?`)) remove.mutate(row.original.userId);
              }}
            >
              Remove
            </Button>
          ) : null,
      },
    ],
    [manage, changeRole, remove, currentUserId],
  );

  return (
    <>
      <PageHeader
        title="Members"
        description={
          manage
            ? "Who belongs to this lab and what each may do. A lab always keeps at least one owner."
            : "Who belongs to this lab. Only owners can invite people or change roles."
        }
      />
      <div className="space-y-8">
        {manage && <InviteForm labId={labId} />}
        {mutationError && <FormError message={mutationError.message} />}
        {members.isPending ? (
          <Loading label="Loading members…" />
        ) : members.isError ? (
          <ErrorState error={members.error} retry={() => members.refetch()} />
        ) : members.data.length === 0 ? (
          <EmptyState title="No members" />
        ) : (
          <DataTable data={members.data} columns={columns} caption="Lab members" />
        )}
        {manage && (
          <section>
            <h2 className="mb-3 text-sm font-semibold">Invitations</h2>
            <InvitationsTable labId={labId} />
          </section>
        )}
      </div>
    </>
  );
}
