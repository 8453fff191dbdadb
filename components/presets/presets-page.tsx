"use client";

import type { ColumnDef } from "@tanstack/react-table";
import { useMemo } from "react";
import { Button } from "@/components/ui/button";
import { DataTable } from "@/components/ui/data-table";
import { FormError } from "@/components/ui/field";
import { EmptyState, ErrorState, Loading, PageHeader } from "@/components/ui/states";
import { useDeletePreset, useDuplicatePreset, usePresets, useRenamePreset } from "@/lib/client/presets";
import { can, type Role } from "@/lib/permissions";
import type { PresetOut } from "@/lib/schemas/preset";

export function PresetsPage({ labId, role, userId }: { labId: number; role: Role; userId: number }) {
  const presets = usePresets(labId);
  const rename = useRenamePreset(labId);
  const remove = useDeletePreset(labId);
  const duplicate = useDuplicatePreset(labId);
  const mayChange = (p: PresetOut) => (p.scope === "private" ? p.ownerId === userId : can(role, "presets.edit"));
  const error = rename.error ?? remove.error ?? duplicate.error;

  const columns = useMemo<ColumnDef<PresetOut, unknown>[]>(
    () => [
      { accessorKey: "name", header: "Name", cell: ({ row }) => <span className="font-medium">{row.original.name}</span> },
      { accessorKey: "scope", header: "Shared with", cell: ({ row }) => (row.original.scope === "lab" ? "the lab" : "only you") },
      {
        id: "channels",
        header: "Channels",
        enableSorting: false,
        cell: ({ row }) => (
          <span className="flex flex-wrap gap-1">
            {row.original.channels.map((ch, i) => (
              <span key={i} className="inline-flex items-center gap-1 rounded bg-paper-100 px-1.5 py-0.5 text-xs">
                <span aria-hidden className="inline-block h-2.5 w-2.5 rounded-sm" style={{ background: ch.colour }} />
                {ch.match.name ?? `#${ch.match.index + 1}`}
                {ch.gamma !== 1 && <span className="text-caution-700"> γ {ch.gamma}</span>}
              </span>
            ))}
          </span>
        ),
      },
      { accessorKey: "blend", header: "Blend" },
      { accessorKey: "updatedAt", header: "Changed", cell: ({ row }) => <span className="num whitespace-nowrap">{row.original.updatedAt.slice(0, 10)}</span> },
      {
        id: "actions",
        header: () => <span className="sr-only">Actions</span>,
        enableSorting: false,
        cell: ({ row }) => {
          const p = row.original;
          return (
            <span className="flex gap-1">
              <Button variant="ghost" onClick={() => duplicate.mutate(p.id)} aria-label={`Duplicate ${p.name}`}>
                Duplicate
              </Button>
              {mayChange(p) && (
                <>
                  <Button
                    variant="ghost"
                    aria-label={`Rename ${p.name}`}
                    onClick={() => {
                      const name = window.prompt("New name for this preset", p.name);
                      if (name && name.trim() && name.trim() !== p.name) rename.mutate({ id: p.id, version: p.version, name: name.trim() });
                    }}
                  >
                    Rename
                  </Button>
                  <Button
                    variant="danger"
                    aria-label={`Delete ${p.name}`}
                    onClick={() => {
                      if (window.confirm(`Delete the preset "${p.name}"?`)) remove.mutate(p.id);
                    }}
                  >
                    Delete
                  </Button>
                </>
              )}
            </span>
          );
        },
      },
    ],
    // eslint-disable-next-line react-hooks/exhaustive-deps -- mutations are stable; role and user fixed for the page
    [],
  );

  return (
    <>
      <PageHeader
        title="Presets"
        description="Named sets of channel mappings. Save one from the bench (Preset menu), apply it to any dataset there; lab presets are shared with every member."
      />
      <div className="space-y-4">
        {error && (
          <FormError message={"status" in error && (error as { status: number }).status === 409 ? "Someone changed this preset meanwhile; the list now shows their version. Try again." : error.message} />
        )}
        {presets.isPending ? (
          <Loading label="Loading presets…" />
        ) : presets.isError ? (
          <ErrorState error={presets.error} retry={() => presets.refetch()} />
        ) : presets.data.length === 0 ? (
          <EmptyState title="No presets yet">Open a dataset on the bench, set up its channels, and choose Preset ▸ Save current as preset.</EmptyState>
        ) : (
          <DataTable data={presets.data} columns={columns} caption="Presets" />
        )}
      </div>
    </>
  );
}
