"use client";

import type { ColumnDef } from "@tanstack/react-table";
import { useState } from "react";
import { Button } from "@/components/ui/button";
import { DataTable } from "@/components/ui/data-table";
import { FormError } from "@/components/ui/field";
import { EmptyState, ErrorState, Loading, PageHeader } from "@/components/ui/states";
import { presetsExportUrl, useDeletePreset, useDuplicatePreset, usePresets, type ImportOutcome } from "@/lib/client/presets";
import { can, type Role } from "@/lib/permissions";
import type { PresetOut } from "@/lib/schemas/preset";
import { ApplyMenu } from "./apply-menu";
import { ImportPanel } from "./import-panel";
import { NewPresetPanel } from "./new-preset-panel";
import { RenamePanel } from "./rename-panel";

/** Styles of a secondary Button, for download links (an <a download> is the honest element for a file). */
const linkButton =
  "inline-flex items-center justify-center gap-2 rounded border border-paper-300 bg-white px-3 py-1.5 text-sm font-medium text-paper-900 transition-colors hover:bg-paper-100";

type Panel = { kind: "new" } | { kind: "import" } | { kind: "rename"; preset: PresetOut } | null;

function outcomeNote({ imported, renamed }: ImportOutcome, scope: "private" | "lab"): string {
  const where = scope === "lab" ? "the lab's presets" : "your presets";
  const count = imported.length === 1 ? "1 preset" : `${imported.length} presets`;
  const renames = renamed.map((r) => `“${r.from}” was stored as “${r.to}”`).join("; ");
  return `Imported ${count} into ${where}.${renames ? ` ${renames}.` : ""}`;
}

export function PresetsPage({ labId, role, userId }: { labId: number; role: Role; userId: number }) {
  const presets = usePresets(labId);
  const remove = useDeletePreset(labId);
  const duplicate = useDuplicatePreset(labId);
  const [panel, setPanel] = useState<Panel>(null);
  const [note, setNote] = useState<string | null>(null);
  const [selected, setSelected] = useState<ReadonlySet<number>>(new Set());
  const mayShare = can(role, "presets.edit");
  const mayChange = (p: PresetOut) => (p.scope === "private" ? p.ownerId === userId : mayShare);
  const error = remove.error ?? duplicate.error;

  const toggle = (id: number) =>
    setSelected((old) => {
      const next = new Set(old);
      if (next.has(id)) next.delete(id);
      else next.add(id);
      return next;
    });
  const all = presets.data ?? [];
  // Only ids still in the list count (a selected preset may have been deleted meanwhile).
  const chosen = all.filter((p) => selected.has(p.id)).map((p) => p.id);
  const allSelected = all.length > 0 && chosen.length === all.length;

  const columns: ColumnDef<PresetOut, unknown>[] = [
    {
      id: "select",
      enableSorting: false,
      header: () => (
        <input
          type="checkbox"
          aria-label="Select all presets"
          checked={allSelected}
          onChange={() => setSelected(allSelected ? new Set() : new Set(all.map((p) => p.id)))}
          className="h-4 w-4 accent-flux-700"
        />
      ),
      cell: ({ row }) => (
        <input
          type="checkbox"
          aria-label={`Select ${row.original.name}`}
          checked={selected.has(row.original.id)}
          onChange={() => toggle(row.original.id)}
          className="h-4 w-4 accent-flux-700"
        />
      ),
    },
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
          <span className="flex items-center gap-1">
            <ApplyMenu labId={labId} presetId={p.id} presetName={p.name} />
            <Button variant="ghost" onClick={() => duplicate.mutate(p.id)} aria-label={`Duplicate ${p.name}`}>
              Duplicate
            </Button>
            {mayChange(p) && (
              <>
                <Button
                  variant="ghost"
                  aria-label={`Rename ${p.name}`}
                  onClick={() => {
                    setNote(null);
                    setPanel({ kind: "rename", preset: p });
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
  ];

  const importButton = (
    <Button
      variant="secondary"
      onClick={() => {
        setNote(null);
        setPanel({ kind: "import" });
      }}
    >
      Import…
    </Button>
  );

  const newButton = (
    <Button
      onClick={() => {
        setNote(null);
        setPanel({ kind: "new" });
      }}
    >
      New preset…
    </Button>
  );

  return (
    <>
      <PageHeader
        title="Presets"
        description="Named sets of channel mappings. Save one from the bench (Preset menu) or make one with New preset, apply it to any dataset there; lab presets are shared with every member. Export them as a file to move them between labs."
        action={
          <span className="flex gap-2">
            {all.length > 0 && (
              <a href={presetsExportUrl(labId)} download className={linkButton}>
                Export all
              </a>
            )}
            {importButton}
            {newButton}
          </span>
        }
      />
      <div className="space-y-4">
        {panel?.kind === "new" && (
          <NewPresetPanel
            labId={labId}
            mayShare={mayShare}
            onCancel={() => setPanel(null)}
            onDone={(preset) => {
              setPanel(null);
              setNote(`Created “${preset.name}” in ${preset.scope === "lab" ? "the lab's presets" : "your presets"}.`);
            }}
          />
        )}
        {panel?.kind === "import" && (
          <ImportPanel
            labId={labId}
            mayShare={mayShare}
            onCancel={() => setPanel(null)}
            onDone={(outcome, scope) => {
              setPanel(null);
              setNote(outcomeNote(outcome, scope));
            }}
          />
        )}
        {panel?.kind === "rename" && (
          <RenamePanel
            key={panel.preset.id}
            labId={labId}
            preset={panel.preset}
            onCancel={() => setPanel(null)}
            onDone={(name) => {
              setPanel(null);
              setNote(`Renamed to “${name}”.`);
            }}
          />
        )}
        {note && (
          <p role="status" className="rounded border border-ok-700/30 bg-ok-100 px-3 py-2 text-sm text-ok-700">
            {note}
          </p>
        )}
        {error && <FormError message={error.message} />}
        {chosen.length > 0 && (
          <div className="flex flex-wrap items-center gap-3 rounded border border-paper-200 bg-paper-50 px-3 py-2 text-sm" aria-label="Selection">
            <span className="num">{chosen.length} selected</span>
            <a href={presetsExportUrl(labId, chosen)} download className={linkButton}>
              Export selected
            </a>
            <Button variant="ghost" onClick={() => setSelected(new Set())}>
              Clear selection
            </Button>
          </div>
        )}
        {presets.isPending ? (
          <Loading label="Loading presets…" />
        ) : presets.isError ? (
          <ErrorState error={presets.error} retry={() => presets.refetch()} />
        ) : presets.data.length === 0 ? (
          <EmptyState title="No presets yet" action={panel ? undefined : <span className="flex gap-2">{importButton}{newButton}</span>}>
            Open a dataset on the bench, set up its channels, and choose Preset ▸ Save current as preset — or make one here with New preset, or import a presets file.
          </EmptyState>
        ) : (
          <DataTable data={presets.data} columns={columns} caption="Presets" />
        )}
      </div>
    </>
  );
}
