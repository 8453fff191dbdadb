"use client";

import type { ColumnDef, SortingState } from "@tanstack/react-table";
import Link from "next/link";
import { useMemo, useState } from "react";
import { Button } from "@/components/ui/button";
import { DataTable } from "@/components/ui/data-table";
import { EmptyState, ErrorState, Loading, PageHeader } from "@/components/ui/states";
import { VerdictBadge } from "@/components/checks/verdict-badge";
import { useLabChecks } from "@/lib/client/checks";
import { formatBytes, useDatasets } from "@/lib/client/datasets";
import { can, type Role } from "@/lib/permissions";
import type { DatasetOut } from "@/lib/schemas/dataset";
import { UploadPanel } from "./upload-panel";

export function StatusCell({ d }: { d: DatasetOut }) {
  if (d.status === "ready") return <span className="whitespace-nowrap text-ok-700">✓ Ready</span>;
  if (d.status === "failed")
    return (
      <span className="text-fault-700" title={d.failureReason ?? undefined}>
        ✕ Failed<span className="block max-w-56 truncate text-xs">{d.failureReason}</span>
      </span>
    );
  const percent = d.progress.total ? Math.round((100 * d.progress.done) / d.progress.total) : 0;
  return (
    <span className="block w-32">
      <span className="text-xs text-paper-700">{d.status === "queued" ? "Queued" : `Reading planes ${d.progress.done}/${d.progress.total}`}</span>
      <span role="progressbar" aria-valuenow={percent} aria-valuemin={0} aria-valuemax={100} aria-label={`Ingest of ${d.title}`} className="mt-1 block h-1.5 overflow-hidden rounded bg-paper-200">
        <span className="block h-full bg-flux-600" style={{ width: `${percent}%` }} />
      </span>
    </span>
  );
}

const dims = (d: DatasetOut) => (d.sizeC ? `${d.sizeC}×${d.sizeZ}×${d.sizeT}` : "—");

export function LibraryPage({ labId, role }: { labId: number; role: Role }) {
  const [search, setSearch] = useState("");
  const [status, setStatus] = useState("");
  const [experiment, setExperiment] = useState("");
  const [tag, setTag] = useState("");
  const [bin, setBin] = useState(false);
  const [page, setPage] = useState(1);
  const [sorting, setSorting] = useState<SortingState>([{ id: "createdAt", desc: true }]);
  const query = useMemo(() => {
    const q: Record<string, string> = { page: String(page), pageSize: "25", sort: sorting[0]?.id ?? "createdAt", dir: sorting[0]?.desc === false ? "asc" : "desc" };
    if (search) q.q = search;
    if (status) q.status = status;
    if (experiment) q.experiment = experiment;
    if (tag) q.tag = tag;
    if (bin) q.bin = "1";
    return q;
  }, [search, status, experiment, tag, bin, page, sorting]);
  const list = useDatasets(labId, query);
  // Verdicts of the acquisition check, computed by the server from the stored statistics.
  const checks = useLabChecks(labId);
  const verdicts = useMemo(() => new Map(checks.data?.datasets.map((d) => [d.datasetId, d.verdict]) ?? []), [checks.data]);

  const columns = useMemo<ColumnDef<DatasetOut, unknown>[]>(
    () => [
      {
        id: "thumbnail",
        header: () => <span className="sr-only">Thumbnail</span>,
        enableSorting: false,
        cell: ({ row }) =>
          row.original.hasThumbnail ? (
            // eslint-disable-next-line @next/next/no-img-element -- a private, access-checked API image; next/image would proxy it
            <img src={`/api/datasets/${row.original.id}/thumbnail`} alt="" width={48} height={48} className="block h-12 w-12 min-w-12 rounded-sm bg-graphite-950 object-contain" />
          ) : (
            <span className="block h-12 w-12 min-w-12 rounded-sm bg-paper-200" />
          ),
      },
      {
        accessorKey: "title",
        header: "Title",
        cell: ({ row }) => (
          <span>
            <Link href={`/labs/${labId}/datasets/${row.original.id}`} className="font-medium text-flux-700 underline-offset-2 hover:underline">
              {row.original.title}
            </Link>
            {row.original.lossy && <span className="ml-2 rounded bg-fault-100 px-1.5 py-0.5 text-xs font-semibold text-fault-700">lossy — not for quantification</span>}
            {row.original.experiment && <span className="block text-xs text-paper-700">{row.original.experiment}</span>}
          </span>
        ),
      },
      { id: "czt", header: "C×Z×T", enableSorting: false, cell: ({ row }) => <span className="num block whitespace-nowrap text-right">{dims(row.original)}</span> },
      { id: "wh", header: "W×H", enableSorting: false, cell: ({ row }) => <span className="num block whitespace-nowrap text-right">{row.original.width ? `${row.original.width}×${row.original.height}` : "—"}</span> },
      { id: "bits", header: "Bits", enableSorting: false, cell: ({ row }) => <span className="num block whitespace-nowrap text-right">{row.original.ceiling ? `${Math.log2(row.original.ceiling + 1)} in ${row.original.bitsPerSample}` : (row.original.bitsPerSample ?? "—")}</span> },
      { accessorKey: "sizeBytes", header: "Size", cell: ({ row }) => <span className="num block whitespace-nowrap text-right">{formatBytes(row.original.sizeBytes)}</span> },
      { accessorKey: "status", header: "Status", cell: ({ row }) => <StatusCell d={row.original} /> },
      {
        id: "check",
        header: "Check",
        enableSorting: false,
        cell: ({ row }) => {
          const verdict = verdicts.get(row.original.id);
          return verdict ? (
            <Link href={`/labs/${labId}/datasets/${row.original.id}/check`} aria-label={`Acquisition check of ${row.original.title}: ${verdict}`}>
              <VerdictBadge verdict={verdict} />
            </Link>
          ) : (
            "—"
          );
        },
      },
      { id: "uploadedBy", header: "Uploaded by", enableSorting: false, cell: ({ row }) => row.original.uploadedBy ?? "—" },
      { accessorKey: "createdAt", header: "Date", cell: ({ row }) => <span className="num whitespace-nowrap">{row.original.createdAt.slice(0, 10)}</span> },
    ],
    [labId, verdicts],
  );

  const pages = list.data ? Math.max(1, Math.ceil(list.data.total / list.data.pageSize)) : 1;
  const filtered = Boolean(search || status || experiment || tag);

  return (
    <>
      <PageHeader title="Datasets" description="Raw stacks of this lab. Upload TIFF or OME-TIFF; each is checked by SHA-256, stored unchanged, and read plane by plane for exact statistics." />
      <div className="space-y-6">
        {can(role, "datasets.upload") ? <UploadPanel labId={labId} /> : <p className="text-sm text-paper-700">Viewers can look at datasets; editors and owners upload them.</p>}
        <div className="flex flex-wrap items-end gap-3">
          <label className="flex flex-col text-xs text-paper-700">
            Search
            <input type="search" value={search} onChange={(e) => { setSearch(e.target.value); setPage(1); }} placeholder="Title, file, experiment, sample" className="mt-0.5 w-64 rounded border border-paper-300 bg-white px-2 py-1.5 text-sm text-paper-900" />
          </label>
          <label className="flex flex-col text-xs text-paper-700">
            Status
            <select value={status} onChange={(e) => { setStatus(e.target.value); setPage(1); }} className="mt-0.5 rounded border border-paper-300 bg-white px-2 py-1.5 text-sm text-paper-900">
              <option value="">Any</option>
              <option value="ready">Ready</option>
              <option value="ingesting">Reading planes</option>
              <option value="queued">Queued</option>
              <option value="failed">Failed</option>
            </select>
          </label>
          <label className="flex flex-col text-xs text-paper-700">
            Experiment
            <select value={experiment} onChange={(e) => { setExperiment(e.target.value); setPage(1); }} className="mt-0.5 rounded border border-paper-300 bg-white px-2 py-1.5 text-sm text-paper-900">
              <option value="">Any</option>
              {list.data?.experiments.map((x) => (
                <option key={x}>{x}</option>
              ))}
            </select>
          </label>
          <label className="flex flex-col text-xs text-paper-700">
            Tag
            <input value={tag} onChange={(e) => { setTag(e.target.value.trim()); setPage(1); }} className="mt-0.5 w-32 rounded border border-paper-300 bg-white px-2 py-1.5 text-sm text-paper-900" />
          </label>
          <label className="flex items-center gap-2 pb-1.5 text-sm text-paper-900">
            <input type="checkbox" checked={bin} onChange={(e) => { setBin(e.target.checked); setPage(1); }} />
            Show the bin
          </label>
        </div>
        {list.isPending ? (
          <Loading label="Loading datasets…" />
        ) : list.isError ? (
          <ErrorState error={list.error} retry={() => list.refetch()} />
        ) : list.data.datasets.length === 0 ? (
          <EmptyState title={bin ? "The bin is empty" : filtered ? "No dataset matches these filters" : "No datasets yet"}>
            {bin
              ? "Deleted datasets stay here for 7 days and can be restored by editors."
              : filtered
                ? "Clear the search or filters to see every dataset."
                : can(role, "datasets.upload")
                  ? "Drop a TIFF or OME-TIFF stack above to add the first one."
                  : "An editor or owner of this lab can upload the first stack."}
          </EmptyState>
        ) : (
          <DataTable
            data={list.data.datasets}
            columns={columns}
            caption="Datasets"
            server={{
              sorting,
              onSortingChange: (updater) => {
                setSorting(updater);
                setPage(1);
              },
            }}
          />
        )}
        {list.data && list.data.total > list.data.pageSize && (
          <nav aria-label="Pages" className="flex items-center justify-end gap-3 text-sm">
            <Button variant="secondary" disabled={page <= 1} onClick={() => setPage(page - 1)}>
              Previous
            </Button>
            <span className="num">
              Page {page} of {pages} · {list.data.total} datasets
            </span>
            <Button variant="secondary" disabled={page >= pages} onClick={() => setPage(page + 1)}>
              Next
            </Button>
          </nav>
        )}
      </div>
    </>
  );
}
