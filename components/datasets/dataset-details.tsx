"use client";

import Link from "next/link";
import { SavedViews, ViewLinks } from "./views-and-links";
import { useRouter } from "next/navigation";
import { Button } from "@/components/ui/button";
import { FormError } from "@/components/ui/field";
import { ErrorState, Loading } from "@/components/ui/states";
import { StatusCell } from "@/components/library/library-page";
import { formatBytes, useDataset, useDeleteDataset, useRestoreDataset, useVerifyDataset, type ChannelStatOut } from "@/lib/client/datasets";
import { can } from "@/lib/permissions";
import type { DatasetOut } from "@/lib/schemas/dataset";
import { MetadataForm } from "./metadata-form";
import { SamplingCheck } from "./sampling-check";

function Fact({ label, children }: { label: string; children: React.ReactNode }) {
  return (
    <>
      <dt className="text-paper-700">{label}</dt>
      <dd className="num text-right">{children}</dd>
    </>
  );
}

const fmt = (v: number | null | undefined, digits = 1) => (v == null ? "—" : Number.isInteger(v) ? v.toLocaleString("en") : v.toFixed(digits));
const unit = (v: number | null | undefined, u: string, digits = 4) => (v == null ? "not given" : `${Number(v.toFixed(digits))} ${u}`);

function ChannelTable({ dataset, stats }: { dataset: DatasetOut; stats: ChannelStatOut[] }) {
  if (!stats.length) return null;
  const pixelsPerChannel = (dataset.width ?? 0) * (dataset.height ?? 0) * (dataset.sizeZ ?? 0) * (dataset.sizeT ?? 0);
  const pct = (n: number | null) => (n == null || !pixelsPerChannel ? "—" : `${((100 * n) / pixelsPerChannel).toFixed(3)} %`);
  return (
    <div className="overflow-x-auto rounded-md border border-paper-200 bg-white">
      <table className="w-full text-sm">
        <caption className="px-4 pt-3 text-left text-sm font-semibold">Channels over the whole stack (raw counts, DN)</caption>
        <thead className="text-xs uppercase tracking-wide text-paper-700">
          <tr className="border-b border-paper-200">
            <th scope="col" className="px-4 py-2 text-left font-medium">Channel</th>
            {["Min", "Max", "Mean", "SD", "0.1 %", "99.9 %", `At ceiling ${dataset.ceiling ?? ""}`, "At 0"].map((h) => (
              <th key={h} scope="col" className="px-3 py-2 text-right font-medium">{h}</th>
            ))}
          </tr>
        </thead>
        <tbody className="divide-y divide-paper-200">
          {stats.map((s) => {
            const channel = dataset.channels?.[s.c];
            return (
              <tr key={s.c}>
                <td className="px-4 py-2">
                  <span aria-hidden className="mr-2 inline-block h-3 w-3 rounded-sm align-middle" style={{ background: channel?.colour ?? "#888" }} />
                  {channel?.name ?? `Channel ${s.c + 1}`}
                  {channel?.emissionNm && <span className="ml-1 text-xs text-paper-700">{channel.emissionNm} nm</span>}
                </td>
                <td className="num whitespace-nowrap px-3 py-2 text-right">{fmt(s.min)}</td>
                <td className="num whitespace-nowrap px-3 py-2 text-right">{fmt(s.max)}</td>
                <td className="num whitespace-nowrap px-3 py-2 text-right">{fmt(s.mean)}</td>
                <td className="num whitespace-nowrap px-3 py-2 text-right">{fmt(s.sd)}</td>
                <td className="num whitespace-nowrap px-3 py-2 text-right">{fmt(s.percentiles?.["0.1"])}</td>
                <td className="num whitespace-nowrap px-3 py-2 text-right">{fmt(s.percentiles?.["99.9"])}</td>
                <td className={`num whitespace-nowrap px-3 py-2 text-right ${s.countAtCeiling ? "font-semibold text-fault-700" : ""}`}>{pct(s.countAtCeiling)}</td>
                <td className="num whitespace-nowrap px-3 py-2 text-right">{pct(s.countAtZero)}</td>
              </tr>
            );
          })}
        </tbody>
      </table>
    </div>
  );
}

function Integrity({ dataset }: { dataset: DatasetOut }) {
  const verify = useVerifyDataset(dataset.id);
  return (
    <section className="space-y-2 rounded-md border border-paper-200 bg-white p-4 text-sm">
      <h2 className="font-semibold">Original file</h2>
      <p className="text-paper-700">
        {dataset.originalName} · <span className="num">{formatBytes(dataset.sizeBytes)}</span> · stored once, never changed.
      </p>
      <p className="break-all">
        <span className="text-paper-700">SHA-256 </span>
        <code className="num text-xs">{dataset.sha256}</code>
      </p>
      <div className="flex flex-wrap items-center gap-2">
        <Button variant="secondary" busy={verify.isPending} onClick={() => verify.mutate()}>
          Verify stored file
        </Button>
        <a href={`/api/datasets/${dataset.id}/file`} className="rounded border border-paper-300 px-3 py-1.5 font-medium hover:bg-paper-100">
          Download original
        </a>
      </div>
      {verify.data && (
        <p role="status" className={verify.data.match ? "text-ok-700" : "font-semibold text-fault-700"}>
          {verify.data.match ? "✓ Match: the stored bytes hash to the recorded SHA-256." : `✕ Mismatch: the stored file now hashes to ${verify.data.actual}.`}
        </p>
      )}
      <FormError message={verify.error?.message} />
    </section>
  );
}

export function DatasetDetails({ labId, datasetId, userId = null }: { labId: number; datasetId: number; userId?: number | null }) {
  const router = useRouter();
  const query = useDataset(datasetId);
  const remove = useDeleteDataset(datasetId);
  const restore = useRestoreDataset(datasetId);
  if (query.isPending) return <Loading label="Loading dataset…" />;
  if (query.isError) return <ErrorState error={query.error} retry={() => query.refetch()} />;
  const { dataset, channelStats, role } = query.data;
  const editor = can(role, "datasets.edit");
  return (
    <div className="space-y-6">
      <div className="flex flex-wrap items-start justify-between gap-4">
        <div>
          <Link href={`/labs/${labId}/datasets`} className="text-sm text-flux-700 underline">
            ← Datasets
          </Link>
          <h1 className="mt-1 text-xl font-semibold tracking-tight">{dataset.title}</h1>
          <div className="mt-1 flex flex-wrap gap-3 text-sm">
            <StatusCell d={dataset} />
            {dataset.status === "ready" && (
              <Link href={`/labs/${labId}/datasets/${datasetId}/check`} className="text-flux-700 underline">
                Acquisition check
              </Link>
            )}
          </div>
          {dataset.lossy && <p className="mt-2 rounded bg-fault-100 px-2 py-1 text-sm font-semibold text-fault-700">Lossy compression — not for quantification.</p>}
          {dataset.deletedAt && (
            <p className="mt-2 rounded bg-caution-100 px-2 py-1 text-sm text-caution-700">
              In the bin; removed for good on <span className="num">{dataset.purgeAt?.slice(0, 10)}</span> unless restored.
            </p>
          )}
        </div>
        {editor && (
          <div className="flex gap-2">
            {dataset.deletedAt ? (
              <Button variant="secondary" busy={restore.isPending} onClick={() => restore.mutate(undefined)}>
                Restore
              </Button>
            ) : (
              <Button
                variant="danger"
                busy={remove.isPending}
                onClick={async () => {
                  if (!window.confirm(`Move "${dataset.title}" to the bin? It can be restored for 7 days.`)) return;
                  await remove.mutateAsync(undefined);
                  router.push(`/labs/${labId}/datasets`);
                }}
              >
                Move to bin
              </Button>
            )}
          </div>
        )}
      </div>
      <div className="grid gap-6 lg:grid-cols-[1fr_20rem]">
        <div className="space-y-6">
          <ChannelTable dataset={dataset} stats={channelStats} />
          <SamplingCheck dataset={dataset} />
          {editor ? (
            <MetadataForm dataset={dataset} />
          ) : (
            <section className="rounded-md border border-paper-200 bg-white p-4 text-sm">
              <h2 className="mb-2 font-semibold">Experiment</h2>
              <p>{[dataset.experiment, dataset.sample, dataset.treatment].filter(Boolean).join(" · ") || "No experiment details yet."}</p>
              {dataset.notes && <p className="mt-2 whitespace-pre-wrap text-paper-700">{dataset.notes}</p>}
              <p className="mt-2 text-paper-700">Detector profile: {dataset.detector ? <span className="text-paper-900">{dataset.detector.name}</span> : "none"}</p>
            </section>
          )}
          {!dataset.deletedAt && dataset.status === "ready" && (
            <>
              <SavedViews labId={labId} datasetId={datasetId} role={role} userId={userId} />
              <ViewLinks datasetId={datasetId} role={role} />
            </>
          )}
        </div>
        <aside className="space-y-6">
          <section className="rounded-md border border-paper-200 bg-white p-4 text-sm">
            <h2 className="mb-2 font-semibold">From the file</h2>
            <dl className="grid grid-cols-[auto_1fr] gap-x-3 gap-y-1">
              <Fact label="Planes">{fmt(dataset.planeCount)}</Fact>
              <Fact label="C × Z × T">{dataset.sizeC ? `${dataset.sizeC} × ${dataset.sizeZ} × ${dataset.sizeT}` : "—"}</Fact>
              <Fact label="Order">{dataset.dimensionOrder ?? "—"}</Fact>
              <Fact label="Dimensions from">{dataset.dimensionsFrom === "ome-xml" ? "OME-XML" : dataset.dimensionsFrom === "form" ? "upload form" : "—"}</Fact>
              <Fact label="W × H">{dataset.width ? `${dataset.width} × ${dataset.height} px` : "—"}</Fact>
              <Fact label="Container">{dataset.bitsPerSample ? `${dataset.bitsPerSample}-bit` : "—"}</Fact>
              <Fact label="Ceiling">{dataset.ceiling != null ? `${dataset.ceiling} DN` : "—"}</Fact>
              <Fact label="Pixel size">{unit(dataset.physicalSizeX, "µm")}</Fact>
              <Fact label="Z step">{unit(dataset.physicalSizeZ, "µm")}</Fact>
              <Fact label="Interval">{unit(dataset.timeIncrement, "s", 3)}</Fact>
              <Fact label="Codec">{dataset.compression ?? "—"}</Fact>
              {Object.entries(dataset.acquisition ?? {})
                .filter(([k]) => ["byteOrder", "format", "layout", "ceilingFrom"].includes(k))
                .map(([k, v]) => (
                  <Fact key={k} label={{ byteOrder: "Byte order", format: "Format", layout: "Layout", ceilingFrom: "Ceiling from" }[k] ?? k}>
                    {String(v)}
                  </Fact>
                ))}
            </dl>
          </section>
          <Integrity dataset={dataset} />
        </aside>
      </div>
    </div>
  );
}
