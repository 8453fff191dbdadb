"use client";

import { useQueryClient } from "@tanstack/react-query";
import { useEffect, useId, useRef, useState } from "react";
import { Button } from "@/components/ui/button";
import { formatBytes, formatDuration } from "@/lib/client/datasets";
import { cancelUpload, forgetPending, inspectFile, pendingUploads, uploadFile, type FileFacts, type Progress } from "@/lib/client/uploader";
import type { DimensionsBody } from "@/lib/schemas/dataset";
import { dimensionsBody } from "@/lib/schemas/dataset";
import { DIMENSION_ORDERS } from "@/lib/tiff/ome";

type State = "inspecting" | "needs-dimensions" | "uploading" | "done" | "failed" | "cancelled";

interface Item {
  key: string;
  file: File;
  facts: FileFacts | null;
  state: State;
  progress: Progress | null;
  error: string | null;
  datasetId: number | null;
  controller: AbortController | null;
}

function DimensionsForm({ facts, onSubmit }: { facts: FileFacts; onSubmit: (d: DimensionsBody) => void }) {
  const [values, setValues] = useState({ sizeC: "1", sizeZ: "1", sizeT: String(facts.planeCount), order: "XYCZT", pxy: "", pz: "", dt: "" });
  const [error, setError] = useState<string | null>(null);
  const id = useId();
  const field = (name: keyof typeof values, label: string, unit?: string) => (
    <label className="flex flex-col text-xs text-paper-700">
      <span>
        {label} {unit && <span className="text-paper-500">({unit})</span>}
      </span>
      <input
        id={`${id}-${name}`}
        inputMode="decimal"
        value={values[name]}
        onChange={(e) => setValues({ ...values, [name]: e.target.value })}
        className="num mt-0.5 w-24 rounded border border-paper-300 bg-white px-2 py-1 text-right text-sm text-paper-900"
      />
    </label>
  );
  const num = (v: string) => (v.trim() === "" ? null : Number(v));
  return (
    <form
      aria-label={`Dimensions of ${facts.planeCount} planes`}
      className="mt-3 space-y-2 rounded border border-caution-700/30 bg-caution-100 p-3"
      onSubmit={(e) => {
        e.preventDefault();
        const parsed = dimensionsBody.safeParse({
          sizeC: num(values.sizeC),
          sizeZ: num(values.sizeZ),
          sizeT: num(values.sizeT),
          order: values.order,
          physicalSizeXY: num(values.pxy),
          physicalSizeZ: num(values.pz),
          timeIncrement: num(values.dt),
        });
        if (!parsed.success) return setError(parsed.error.issues[0]?.message ?? "Check the numbers.");
        const product = parsed.data.sizeC * parsed.data.sizeZ * parsed.data.sizeT;
        if (product !== facts.planeCount) return setError(`C·Z·T is ${product}, but the file holds ${facts.planeCount} planes.`);
        setError(null);
        onSubmit(parsed.data);
      }}
    >
      <p className="text-sm text-caution-700">This file has no OME-XML. Say how its {facts.planeCount} planes are arranged:</p>
      <div className="flex flex-wrap items-end gap-3">
        {field("sizeC", "Channels C")}
        {field("sizeZ", "Z-slices")}
        {field("sizeT", "Time points")}
        <label className="flex flex-col text-xs text-paper-700">
          Order in the file
          <select value={values.order} onChange={(e) => setValues({ ...values, order: e.target.value })} className="mt-0.5 rounded border border-paper-300 bg-white px-2 py-1 text-sm text-paper-900">
            {DIMENSION_ORDERS.map((o) => (
              <option key={o}>{o}</option>
            ))}
          </select>
        </label>
        {field("pxy", "Pixel size", "µm")}
        {field("pz", "Z step", "µm")}
        {field("dt", "Interval", "s")}
        <Button type="submit">Upload</Button>
      </div>
      {error && (
        <p role="alert" className="text-xs font-medium text-fault-700">
          {error}
        </p>
      )}
    </form>
  );
}

function ProgressBar({ progress }: { progress: Progress }) {
  const percent = progress.totalBytes ? (100 * progress.sentBytes) / progress.totalBytes : 0;
  return (
    <div className="mt-2">
      <div role="progressbar" aria-valuemin={0} aria-valuemax={100} aria-valuenow={Math.round(percent)} aria-label="Upload progress" className="h-2 overflow-hidden rounded bg-paper-200">
        <div className="h-full bg-flux-600 transition-[width]" style={{ width: `${percent}%` }} />
      </div>
      <p className="num mt-1 text-xs text-paper-700">
        {formatBytes(progress.sentBytes)} of {formatBytes(progress.totalBytes)}
        {progress.phase === "sending" && progress.rate > 0 && (
          <>
            {" "}· {formatBytes(progress.rate)}/s · {formatDuration(progress.secondsLeft)} left
          </>
        )}
        {progress.phase === "hashing" && " · checking parts already on the server"}
        {progress.phase === "checking" && " · server is checking the SHA-256"}
      </p>
    </div>
  );
}

export function UploadPanel({ labId }: { labId: number }) {
  const client = useQueryClient();
  const [items, setItems] = useState<Item[]>([]);
  const [dragging, setDragging] = useState(false);
  const [pending, setPending] = useState<Awaited<ReturnType<typeof pendingUploads>>>([]);
  const input = useRef<HTMLInputElement>(null);

  useEffect(() => {
    void pendingUploads(labId).then(setPending);
  }, [labId]);

  const update = (key: string, patch: Partial<Item>) => setItems((all) => all.map((it) => (it.key === key ? { ...it, ...patch } : it)));

  const start = async (item: Item, dimensions?: DimensionsBody) => {
    const controller = new AbortController();
    update(item.key, { state: "uploading", controller, error: null, progress: { sentBytes: 0, totalBytes: item.file.size, rate: 0, secondsLeft: null, phase: "sending" } });
    try {
      const datasetId = await uploadFile(labId, item.file, { dimensions, signal: controller.signal, onProgress: (progress) => update(item.key, { progress }) });
      update(item.key, { state: "done", datasetId, controller: null });
      setPending(await pendingUploads(labId));
      void client.invalidateQueries({ queryKey: ["labs", labId, "datasets"] });
    } catch (error) {
      if (controller.signal.aborted) return;
      update(item.key, { state: "failed", error: error instanceof Error ? error.message : "Upload failed.", controller: null });
    }
  };

  const add = async (files: FileList | File[]) => {
    const added = [...files].map((file) => ({
      key: `${file.name}:${file.size}:${file.lastModified}:${Math.random()}`,
      file,
      facts: null,
      state: "inspecting" as State,
      progress: null,
      error: null,
      datasetId: null,
      controller: null,
    }));
    setItems((all) => [...added, ...all]);
    for (const item of added) {
      const facts = await inspectFile(item.file);
      if (facts.problem) {
        update(item.key, { facts, state: "failed", error: facts.problem });
      } else if (!facts.hasOme && facts.planeCount > 1) {
        update(item.key, { facts, state: "needs-dimensions" });
      } else {
        const ready = { ...item, facts };
        update(item.key, { facts });
        void start(ready, facts.hasOme ? undefined : { sizeC: 1, sizeZ: 1, sizeT: 1, order: "XYCZT" });
      }
    }
  };

  return (
    <section aria-label="Upload" className="space-y-3">
      <div
        onDragOver={(e) => {
          e.preventDefault();
          setDragging(true);
        }}
        onDragLeave={() => setDragging(false)}
        onDrop={(e) => {
          e.preventDefault();
          setDragging(false);
          void add(e.dataTransfer.files);
        }}
        className={`flex flex-wrap items-center justify-between gap-3 rounded-md border-2 border-dashed px-4 py-4 text-sm ${dragging ? "border-flux-600 bg-flux-50" : "border-paper-300 bg-white"}`}
      >
        <p className="text-paper-700">
          Drop TIFF, BigTIFF or OME-TIFF stacks here. Lossless codecs keep counts exact; originals are stored once and never changed.
        </p>
        <Button type="button" onClick={() => input.current?.click()}>
          Choose files…
        </Button>
        <input
          ref={input}
          type="file"
          multiple
          accept=".tif,.tiff,.btf,image/tiff"
          aria-label="Choose stack files to upload"
          className="sr-only"
          onChange={(e) => {
            if (e.target.files) void add(e.target.files);
            e.target.value = "";
          }}
        />
      </div>
      {pending.length > 0 && (
        <div className="rounded border border-paper-200 bg-white p-3 text-sm">
          <p className="font-medium">Unfinished uploads</p>
          <ul className="mt-1 space-y-1">
            {pending.map((p) => (
              <li key={p.uploadId} className="flex items-center justify-between gap-2 text-paper-700">
                <span>
                  {p.name} <span className="num">({formatBytes(p.size)})</span> — choose the same file again to resume.
                </span>
                <Button variant="ghost" onClick={() => void forgetPending(labId, p).then(() => pendingUploads(labId)).then(setPending)}>
                  Discard
                </Button>
              </li>
            ))}
          </ul>
        </div>
      )}
      {items.length > 0 && (
        <ul className="space-y-2">
          {items.map((item) => (
            <li key={item.key} className="rounded border border-paper-200 bg-white p-3 text-sm" aria-label={`Upload of ${item.file.name}`}>
              <div className="flex flex-wrap items-center justify-between gap-2">
                <span className="font-medium">{item.file.name}</span>
                <span className="num text-xs text-paper-700">
                  {formatBytes(item.file.size)}
                  {item.facts && item.facts.planeCount > 0 && ` · ${item.facts.planeCount} planes · ${item.facts.width}×${item.facts.height} · ${item.facts.bits}-bit`}
                </span>
                <span className="flex gap-2">
                  {item.state === "uploading" && (
                    <Button
                      variant="secondary"
                      onClick={() => {
                        item.controller?.abort();
                        update(item.key, { state: "cancelled", controller: null });
                        void cancelUpload(labId, item.file).then(() => pendingUploads(labId)).then(setPending);
                      }}
                    >
                      Cancel
                    </Button>
                  )}
                  {item.state === "failed" && item.facts && !item.facts.problem && (
                    <Button variant="secondary" onClick={() => void start(item)}>
                      Retry
                    </Button>
                  )}
                </span>
              </div>
              {item.facts?.lossy && <p className="mt-1 text-xs font-semibold text-fault-700">Lossy compression — not for quantification.</p>}
              {item.state === "inspecting" && <p className="mt-1 text-xs text-paper-700">Reading the file&apos;s structure…</p>}
              {item.state === "needs-dimensions" && item.facts && <DimensionsForm facts={item.facts} onSubmit={(d) => void start(item, d)} />}
              {item.progress && (item.state === "uploading" || item.state === "done") && <ProgressBar progress={item.progress} />}
              {item.state === "done" && (
                <p role="status" className="mt-1 text-xs text-ok-700">
                  Uploaded and checked (SHA-256 matches). Reading planes and statistics now.
                </p>
              )}
              {item.state === "cancelled" && <p className="mt-1 text-xs text-paper-700">Cancelled; nothing was kept.</p>}
              {item.error && (
                <p role="alert" className="mt-1 text-xs font-medium text-fault-700">
                  {item.error}
                </p>
              )}
            </li>
          ))}
        </ul>
      )}
    </section>
  );
}
