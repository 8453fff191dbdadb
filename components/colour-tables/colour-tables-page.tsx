"use client";

import type { ColumnDef } from "@tanstack/react-table";
import { useMemo, useState } from "react";
import { Button } from "@/components/ui/button";
import { DataTable } from "@/components/ui/data-table";
import { EmptyState, ErrorState, Loading, PageHeader } from "@/components/ui/states";
import { exportUrl, useColourTables } from "@/lib/client/colour-tables";
import { builtInTables, type ColourTable } from "@/lib/imaging/colour-tables";
import { checkLightness, cvdSafety, hexStringToRgb, lightnessProfile, sampleStops, tableToCsv, type CvdVerdict, type LightnessCheck } from "@/lib/imaging/table-editor";
import { can, type Role } from "@/lib/permissions";
import type { ColourTableOut } from "@/lib/schemas/colour-table";
import { CvdBadge, LightnessWord } from "./analysis";
import { ImportForm } from "./import-form";
import { Ramp } from "./ramp";
import { DEFAULT_STOPS, draftFromTable, TableEditor, type Draft } from "./table-editor";

interface Row {
  key: string;
  name: string;
  rgb: Uint8Array;
  verdict: CvdVerdict;
  lightness: LightnessCheck;
}
type CustomRow = Row & { table: ColourTableOut };
type BuiltInRow = Row & { table: ColourTable };

const scopeWords = { private: "only you", lab: "the lab", public: "everyone (public)" } as const;

function summarise(name: string, key: string, rgb: Uint8Array): Row {
  return { key, name, rgb, verdict: cvdSafety(rgb), lightness: checkLightness(lightnessProfile(rgb)) };
}

function download(name: string, text: string) {
  const url = URL.createObjectURL(new Blob([text], { type: "text/csv" }));
  const a = document.createElement("a");
  a.href = url;
  a.download = name;
  a.click();
  URL.revokeObjectURL(url);
}

const rampCell = (row: Row) => (
  <div className="w-32">
    <Ramp rgb={row.rgb} label={`${row.name} ramp`} className="h-4" />
  </div>
);

export function ColourTablesPage({ labId, role }: { labId: number; role: Role }) {
  const tables = useColourTables(labId);
  const mayShare = can(role, "presets.edit");
  const [draft, setDraft] = useState<Draft | null>(null);
  const [importing, setImporting] = useState(false);

  const rows = useMemo<CustomRow[]>(
    () => (tables.data ?? []).map((t) => ({ ...summarise(t.name, `t${t.id}`, hexStringToRgb(t.rgb)), table: t })),
    [tables.data],
  );
  const builtInRows = useMemo<BuiltInRow[]>(() => builtInTables.map((t) => ({ ...summarise(t.name, t.id, t.rgb), table: t })), []);

  const open = (t: ColourTableOut) => {
    setImporting(false);
    setDraft(draftFromTable(t));
    window.scrollTo({ top: 0 });
  };

  const columns = useMemo<ColumnDef<CustomRow, unknown>[]>(
    () => [
      { id: "ramp", header: "Ramp", enableSorting: false, cell: ({ row }) => rampCell(row.original) },
      {
        accessorKey: "name",
        header: "Name",
        cell: ({ row }) => (
          <button type="button" className="text-left font-medium text-flux-700 underline-offset-2 hover:underline" onClick={() => open(row.original.table)}>
            {row.original.name}
          </button>
        ),
      },
      { id: "scope", accessorFn: (r) => r.table.scope, header: "Shared with", cell: ({ row }) => scopeWords[row.original.table.scope] },
      { id: "cvd", accessorFn: (r) => (r.verdict.safe ? 1 : 0), header: "Colour vision", cell: ({ row }) => <CvdBadge verdict={row.original.verdict} /> },
      { id: "lightness", accessorFn: (r) => r.lightness.direction, header: "Lightness", cell: ({ row }) => <LightnessWord check={row.original.lightness} /> },
      {
        id: "owner",
        accessorFn: (r) => r.table.ownerName ?? "",
        header: "Owner",
        cell: ({ row }) => {
          const t = row.original.table;
          return (
            <span>
              {t.ownerName ?? "former member"}
              {t.labId !== labId && <span className="block text-xs text-paper-700">{t.labName}</span>}
            </span>
          );
        },
      },
      {
        id: "actions",
        header: () => <span className="sr-only">Actions</span>,
        enableSorting: false,
        cell: ({ row }) => {
          const t = row.original.table;
          return (
            <span className="flex gap-1">
              <Button variant="ghost" onClick={() => open(t)} aria-label={`${t.canEdit ? "Edit" : "View"} ${t.name}`}>
                {t.canEdit ? "Edit" : "View"}
              </Button>
              <a href={exportUrl(labId, t.id, "csv")} download className="rounded px-3 py-1.5 text-sm font-medium text-paper-700 hover:bg-paper-100" aria-label={`Export ${t.name} as CSV`}>
                CSV
              </a>
            </span>
          );
        },
      },
    ],
    [labId],
  );

  const builtInColumns = useMemo<ColumnDef<BuiltInRow, unknown>[]>(
    () => [
      { id: "ramp", header: "Ramp", enableSorting: false, cell: ({ row }) => rampCell(row.original) },
      { accessorKey: "name", header: "Name", cell: ({ row }) => <span className="font-medium">{row.original.name}</span> },
      { id: "cvd", accessorFn: (r) => (r.verdict.safe ? 1 : 0), header: "Colour vision", cell: ({ row }) => <CvdBadge verdict={row.original.verdict} /> },
      { id: "lightness", accessorFn: (r) => r.lightness.direction, header: "Lightness", cell: ({ row }) => <LightnessWord check={row.original.lightness} /> },
      {
        id: "actions",
        header: () => <span className="sr-only">Actions</span>,
        enableSorting: false,
        cell: ({ row }) => {
          const t = row.original.table;
          return (
            <span className="flex gap-1">
              <Button
                variant="ghost"
                aria-label={`View ${t.name}`}
                onClick={() => {
                  setImporting(false);
                  setDraft({ id: null, version: null, name: t.name, scope: "private", space: "oklab", stops: null, entries: t.rgb, readOnly: true, builtIn: true });
                  window.scrollTo({ top: 0 });
                }}
              >
                View
              </Button>
              <Button
                variant="ghost"
                aria-label={`Start a new table from ${t.name}`}
                onClick={() => {
                  setImporting(false);
                  setDraft({ id: null, version: null, name: `${t.name} (copy)`.slice(0, 120), scope: "private", space: "oklab", stops: sampleStops(t.rgb), entries: null, readOnly: false });
                  window.scrollTo({ top: 0 });
                }}
              >
                Start from this
              </Button>
              <Button variant="ghost" aria-label={`Export ${t.name} as CSV`} onClick={() => download(`${t.id}.csv`, tableToCsv(t.rgb))}>
                CSV
              </Button>
            </span>
          );
        },
      },
    ],
    [],
  );

  return (
    <>
      <PageHeader
        title="Colour tables"
        description="Colour ramps that map display levels to colour. Make your own from colour stops, check its lightness and how it reads with colour-vision deficiencies, and use it on the bench."
        action={
          <span className="flex gap-2">
            <Button
              variant="secondary"
              onClick={() => {
                setDraft(null);
                setImporting(true);
              }}
            >
              Import…
            </Button>
            <Button
              onClick={() => {
                setImporting(false);
                setDraft({ id: null, version: null, name: "", scope: "private", space: "oklab", stops: DEFAULT_STOPS, entries: null, readOnly: false });
              }}
            >
              New colour table
            </Button>
          </span>
        }
      />

      {importing && (
        <ImportForm
          labId={labId}
          mayShare={mayShare}
          onCancel={() => setImporting(false)}
          onDone={(t) => {
            setImporting(false);
            setDraft(draftFromTable(t));
          }}
        />
      )}
      {draft && (
        <TableEditor
          labId={labId}
          draft={draft}
          mayShare={mayShare}
          onChange={setDraft}
          onClose={() => setDraft(null)}
          onReload={async (id) => {
            const fresh = (await tables.refetch()).data?.find((t) => t.id === id);
            setDraft(fresh ? draftFromTable(fresh) : null);
          }}
        />
      )}

      <section aria-labelledby="lab-tables" className="space-y-3">
        <h2 id="lab-tables" className="text-base font-semibold text-paper-900">
          Your lab&apos;s colour tables
        </h2>
        {tables.isPending ? (
          <Loading label="Loading colour tables…" />
        ) : tables.isError ? (
          <ErrorState error={tables.error} retry={() => tables.refetch()} />
        ) : rows.length === 0 ? (
          <EmptyState title="No custom colour tables yet">
            Choose New colour table to make one from colour stops, or Import… a CSV file with 256 rows index,r,g,b. Built-in tables are listed below for reference.
          </EmptyState>
        ) : (
          <DataTable data={rows} columns={columns} caption="Your lab's colour tables" />
        )}
      </section>

      <section aria-labelledby="built-in-tables" className="mt-10 space-y-3">
        <h2 id="built-in-tables" className="text-base font-semibold text-paper-900">
          Built-in colour tables (read-only)
        </h2>
        <DataTable data={builtInRows} columns={builtInColumns} caption="Built-in colour tables" />
      </section>
    </>
  );
}
