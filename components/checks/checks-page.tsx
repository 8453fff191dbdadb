"use client";

import type { ColumnDef } from "@tanstack/react-table";
import Link from "next/link";
import { useState } from "react";
import { Button } from "@/components/ui/button";
import { DataTable } from "@/components/ui/data-table";
import { EmptyState, ErrorState, Loading, PageHeader } from "@/components/ui/states";
import { ApiError } from "@/lib/client/api";
import { useLabChecks, useSaveThresholds, type LabCheckRow } from "@/lib/client/checks";
import type { CheckThresholds, Verdict } from "@/lib/imaging/acquisition-check";
import { VerdictBadge } from "./verdict-badge";

const rank: Record<Verdict, number> = { ready: 0, caution: 1, "re-image": 2 };
const pct = (f: number | null) => (f === null ? "—" : `${(100 * f).toFixed(f > 0 && f < 0.001 ? 3 : 2)} %`);

export function ChecksPage({ labId, mayConfigure }: { labId: number; mayConfigure: boolean }) {
  const checks = useLabChecks(labId);
  const columns: ColumnDef<LabCheckRow, unknown>[] = [
    {
      id: "title",
      header: "Dataset",
      accessorFn: (r) => r.title,
      cell: ({ row }) => (
        <Link href={`/labs/${labId}/datasets/${row.original.datasetId}/check`} className="font-medium text-flux-700 underline">
          {row.original.title}
        </Link>
      ),
    },
    { id: "verdict", header: "Verdict", accessorFn: (r) => rank[r.verdict], cell: ({ row }) => <VerdictBadge verdict={row.original.verdict} /> },
    {
      id: "channels",
      header: "Channels",
      enableSorting: false,
      cell: ({ row }) => (
        <span className="flex flex-wrap gap-1">
          {row.original.channels.map((ch) => (
            <VerdictBadge key={ch.c} verdict={ch.verdict} label={ch.name} />
          ))}
        </span>
      ),
    },
    { id: "saturated", header: "At ceiling", accessorFn: (r) => Math.max(...r.channels.map((c) => c.saturatedFraction)), cell: ({ getValue }) => <span className="num block text-right">{pct(getValue() as number)}</span> },
    { id: "zero", header: "At 0", accessorFn: (r) => Math.max(...r.channels.map((c) => c.zeroFraction)), cell: ({ getValue }) => <span className="num block text-right">{pct(getValue() as number)}</span> },
    { id: "range", header: "Range use (least)", accessorFn: (r) => Math.min(...r.channels.map((c) => c.rangeUse)), cell: ({ getValue }) => <span className="num block text-right">{pct(getValue() as number)}</span> },
    { id: "added", header: "Added", accessorFn: (r) => r.createdAt, cell: ({ getValue }) => <span className="num">{String(getValue()).slice(0, 10)}</span> },
  ];
  return (
    <>
      <PageHeader
        title="Checks"
        description="Every dataset's acquisition check from its stored counts: saturation, zero clipping, range use and exposure headroom. Verdicts follow the limits below."
      />
      {checks.isPending ? (
        <Loading label="Checking datasets…" />
      ) : checks.isError ? (
        <ErrorState error={checks.error} retry={() => checks.refetch()} />
      ) : (
        <div className="space-y-6">
          {checks.data.datasets.length === 0 ? (
            <EmptyState title="Nothing to check yet">Upload a stack under Datasets; its check appears here once it has been read.</EmptyState>
          ) : (
            <DataTable data={checks.data.datasets} columns={columns} caption="Acquisition checks of the lab's datasets" />
          )}
          <Thresholds labId={labId} value={checks.data.thresholds} editable={mayConfigure} />
        </div>
      )}
    </>
  );
}

const fields: { key: keyof CheckThresholds; label: string; help: string }[] = [
  { key: "saturatedCaution", label: "Caution above this share at the ceiling", help: "0 = any saturated pixel is a caution" },
  { key: "saturatedReimage", label: "Re-image from this share at the ceiling (whole stack)", help: "" },
  { key: "planeSaturatedReimage", label: "Re-image from this share at the ceiling in one plane", help: "" },
  { key: "zeroCaution", label: "Caution from this share at 0", help: "a hidden dark level" },
  { key: "zeroReimage", label: "Re-image from this share at 0", help: "" },
  { key: "rangeUseCaution", label: "Caution below this range use", help: "(99.99 % point − offset) / (ceiling − offset)" },
];

/** The limits behind the verdicts; the lab owner changes them (common practice, no published values). */
function Thresholds({ labId, value, editable }: { labId: number; value: CheckThresholds; editable: boolean }) {
  const save = useSaveThresholds(labId);
  const [draft, setDraft] = useState<Record<keyof CheckThresholds, string>>(() => Object.fromEntries(fields.map((f) => [f.key, String(+(value[f.key] * 100).toPrecision(6))])) as Record<keyof CheckThresholds, string>);
  const error = save.error instanceof ApiError ? save.error : null;
  return (
    <section className="rounded-md border border-paper-200 bg-white p-4 text-sm" aria-labelledby="limits-title">
      <h2 id="limits-title" className="font-semibold">
        Limits
      </h2>
      <p className="mb-3 mt-1 text-paper-700">
        No published acceptable share of saturated pixels exists; these limits are the lab&apos;s choice (defaults are ours, common practice). Saturated
        pixels must never be quantified, whatever the verdict.
      </p>
      <form
        className="grid gap-3 sm:grid-cols-2"
        onSubmit={(e) => {
          e.preventDefault();
          save.mutate(Object.fromEntries(fields.map((f) => [f.key, Number(draft[f.key]) / 100])) as unknown as CheckThresholds);
        }}
      >
        {fields.map((f) => (
          <label key={f.key} className="flex flex-col gap-1 text-xs text-paper-700">
            <span>
              {f.label} {f.help && <span className="text-paper-500">({f.help})</span>}
            </span>
            <span className="flex items-center gap-1">
              <input
                type="number"
                step="any"
                min={0}
                max={100}
                disabled={!editable}
                value={draft[f.key]}
                onChange={(e) => setDraft((d) => ({ ...d, [f.key]: e.target.value }))}
                aria-invalid={Boolean(error?.fields[f.key])}
                className="num w-28 rounded border border-paper-300 px-2 py-1 text-right text-sm text-paper-900 disabled:bg-paper-100"
              />
              %
            </span>
            {error?.fields[f.key] && <span className="text-fault-700">{error.fields[f.key]}</span>}
          </label>
        ))}
        {editable ? (
          <div className="flex items-center gap-3 sm:col-span-2">
            <Button type="submit" busy={save.isPending}>
              Save limits
            </Button>
            {save.isSuccess && <span role="status">Saved; verdicts are recomputed.</span>}
            {error && !Object.keys(error.fields).length && <span role="alert" className="text-fault-700">{error.message}</span>}
          </div>
        ) : (
          <p className="text-xs text-paper-500 sm:col-span-2">Only the lab owner changes the limits.</p>
        )}
      </form>
    </section>
  );
}
