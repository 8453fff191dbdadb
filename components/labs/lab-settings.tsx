"use client";

import { zodResolver } from "@hookform/resolvers/zod";
import type { ColumnDef } from "@tanstack/react-table";
import { useRouter } from "next/navigation";
import { useState } from "react";
import { useForm } from "react-hook-form";
import type { z } from "zod";
import { Button } from "@/components/ui/button";
import { DataTable } from "@/components/ui/data-table";
import { FormError, SelectField, TextField } from "@/components/ui/field";
import { EmptyState, ErrorState, Loading, PageHeader } from "@/components/ui/states";
import { ApiError } from "@/lib/client/api";
import { useAuditLog, useRemoveMember, useRenameLab } from "@/lib/client/hooks";
import { can, type Role } from "@/lib/permissions";
import { renameLabBody, type AuditEventOut } from "@/lib/schemas/lab";

function RenameForm({ labId, labName }: { labId: number; labName: string }) {
  const router = useRouter();
  const rename = useRenameLab(labId);
  const [saved, setSaved] = useState(false);
  const form = useForm<z.input<typeof renameLabBody>, unknown, z.output<typeof renameLabBody>>({
    resolver: zodResolver(renameLabBody),
    defaultValues: { name: labName },
  });
  const onSubmit = form.handleSubmit(async ({ name }) => {
    setSaved(false);
    try {
      await rename.mutateAsync(name);
      setSaved(true);
      router.refresh();
    } catch (error) {
      if (error instanceof ApiError && error.fields.name) form.setError("name", { message: error.fields.name });
    }
  });
  return (
    <form onSubmit={onSubmit} noValidate className="flex flex-wrap items-start gap-3 rounded-md border border-paper-200 bg-white p-4">
      <div className="min-w-64 flex-1">
        <TextField label="Lab name" error={form.formState.errors.name?.message} {...form.register("name")} />
      </div>
      <div className="pt-6">
        <Button type="submit" busy={rename.isPending}>
          Rename
        </Button>
      </div>
      {saved && (
        <p role="status" className="w-full text-sm text-ok-700">
          Saved.
        </p>
      )}
      {rename.error && !(rename.error instanceof ApiError && rename.error.fields.name) && <FormError message={rename.error.message} />}
    </form>
  );
}

const auditColumns: ColumnDef<AuditEventOut, unknown>[] = [
  { accessorKey: "createdAt", header: "When (UTC)", cell: ({ row }) => <span className="num">{row.original.createdAt.slice(0, 19).replace("T", " ")}</span> },
  { accessorKey: "action", header: "What" },
  { accessorKey: "actor", header: "Who" },
  { accessorKey: "target", header: "Target" },
  { accessorKey: "ip", header: "From" },
];

const auditFilters = [
  ["", "Everything"],
  ["lab.", "Lab changes"],
  ["invitation.", "Invitations"],
  ["member.", "Role changes and removals"],
] as const;

function AuditLog({ labId }: { labId: number }) {
  const [action, setAction] = useState("");
  const log = useAuditLog(labId, action);
  return (
    <section className="space-y-3">
      <div className="flex items-end justify-between gap-4">
        <h2 className="text-sm font-semibold">Activity log</h2>
        <div className="w-64">
          <SelectField label="Show" value={action} onChange={(e) => setAction(e.target.value)}>
            {auditFilters.map(([value, label]) => (
              <option key={value} value={value}>
                {label}
              </option>
            ))}
          </SelectField>
        </div>
      </div>
      {log.isPending ? (
        <Loading label="Loading activity…" />
      ) : log.isError ? (
        <ErrorState error={log.error} retry={() => log.refetch()} />
      ) : log.data.length === 0 ? (
        <EmptyState title="Nothing recorded for this filter" />
      ) : (
        <DataTable data={log.data} columns={auditColumns} caption="Activity log" />
      )}
    </section>
  );
}

function LeaveLab({ labId, userId }: { labId: number; userId: number }) {
  const router = useRouter();
  const leave = useRemoveMember(labId);
  return (
    <section className="space-y-2 rounded-md border border-fault-700/30 bg-white p-4">
      <h2 className="text-sm font-semibold">Leave this lab</h2>
      <p className="text-sm text-paper-700">You lose access to its datasets at once. The last owner cannot leave.</p>
      <FormError message={leave.error?.message} />
      <Button
        variant="danger"
        busy={leave.isPending}
        onClick={async () => {
          if (!window.confirm("Leave this lab?")) return;
          await leave.mutateAsync(userId).then(() => router.push("/labs"), () => undefined);
        }}
      >
        Leave lab
      </Button>
    </section>
  );
}

export function LabSettings({ labId, labName, role, currentUserId }: { labId: number; labName: string; role: Role; currentUserId: number }) {
  return (
    <>
      <PageHeader title="Settings" description={can(role, "lab.rename") ? "The lab's name and its activity log." : "Only owners change lab settings."} />
      <div className="space-y-8">
        {can(role, "lab.rename") && <RenameForm labId={labId} labName={labName} />}
        {can(role, "audit.read") && <AuditLog labId={labId} />}
        <LeaveLab labId={labId} userId={currentUserId} />
      </div>
    </>
  );
}
