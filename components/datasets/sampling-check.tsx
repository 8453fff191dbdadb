"use client";

import { useSearchParams } from "next/navigation";
import { Suspense, useId, useState } from "react";
import type { ZodType } from "zod";
import { SelectField, TextField } from "@/components/ui/field";
import { Loading } from "@/components/ui/states";
import { checkAxialSampling, checkSampling, sig, type AxialCheck, type SamplingCheck as Check, type Verdict } from "@/lib/imaging/sampling";
import type { DatasetOut } from "@/lib/schemas/dataset";
import { immersionMedia, samplingFieldsFrom, samplingQuery, type SamplingFields } from "@/lib/schemas/sampling";
import { SamplingPlot, type SamplingPlotRow } from "./sampling-plot";

// The sampling (Nyquist) check on the dataset page. The objective's NA is not in the dataset's
// metadata, so what a person types lives in the page's query string: reloading or sharing the
// address keeps it, and nothing is written to the dataset.

function parsed<T>(schema: ZodType<T>, text: string): { value: T | undefined; error?: string } {
  const result = schema.safeParse(text);
  return result.success ? { value: result.data } : { value: undefined, error: result.error.issues[0]?.message };
}

const verdictWords: Record<Verdict, { text: string; className: string }> = {
  matched: { text: "✓ meets Nyquist", className: "text-ok-700" },
  "over-sampled": { text: "▽ over-sampled", className: "text-caution-700" },
  "under-sampled": { text: "✕ under-sampled", className: "font-semibold text-fault-700" },
};

function VerdictCell({ verdict }: { verdict: Verdict }) {
  const { text, className } = verdictWords[verdict];
  return <span className={`whitespace-nowrap ${className}`}>{text}</span>;
}

const um = (v: number, digits = 3) => (
  <>
    {sig(v, digits)}
    <span className="text-paper-700"> µm</span>
  </>
);

function EmissionInput({ name, value, error, onChange }: { name: string; value: string; error?: string; onChange: (v: string) => void }) {
  const id = useId();
  return (
    <div className="flex flex-col items-end gap-0.5">
      <label htmlFor={id} className="sr-only">
        Emission of {name} (nm)
      </label>
      <input
        id={id}
        inputMode="decimal"
        autoComplete="off"
        placeholder="nm"
        value={value}
        aria-invalid={error ? true : undefined}
        onChange={(e) => onChange(e.target.value)}
        className="num w-20 rounded border border-paper-300 px-1.5 py-0.5 text-right text-sm aria-[invalid=true]:border-fault-700"
      />
      {error && (
        <span role="alert" className="text-xs text-fault-700">
          {error}
        </span>
      )}
    </div>
  );
}

function Inner({ dataset }: { dataset: DatasetOut }) {
  const search = useSearchParams();
  const channelCount = dataset.sizeC ?? dataset.channels?.length ?? 1;
  const [fields, setFields] = useState<SamplingFields>(() => samplingFieldsFrom(search, channelCount));

  const update = (next: SamplingFields) => {
    setFields(next);
    // Keep any other parameters of the page; empty fields leave the address.
    const params = new URLSearchParams(window.location.search);
    const put = (key: string, value: string) => (value.trim() === "" ? params.delete(key) : params.set(key, value));
    put("na", next.na);
    put("px", next.px);
    put("imm", next.imm);
    put("nyq", next.nyq === "2" ? "" : next.nyq);
    next.em.forEach((v, c) => put(`em${c}`, v));
    const query = params.toString();
    window.history.replaceState(window.history.state, "", `${window.location.pathname}${query ? `?${query}` : ""}`);
  };

  const na = parsed(samplingQuery.shape.na, fields.na);
  const px = parsed(samplingQuery.shape.px, fields.px);
  const imm = parsed(samplingQuery.shape.imm, fields.imm);
  const nyq = parsed(samplingQuery.shape.nyq, fields.nyq);
  const factor = nyq.value ? Number(nyq.value) : 2;
  const pixelUm = dataset.physicalSizeX ?? px.value ?? null;
  const refractiveIndex = immersionMedia.find((m) => m.id === imm.value)?.n ?? null;
  const zStack = (dataset.sizeZ ?? 1) > 1;

  const rows = Array.from({ length: channelCount }, (_, c) => {
    const meta = dataset.channels?.[c];
    const typed = parsed(samplingQuery.shape.em.element, fields.em[c] ?? "");
    const wavelengthNm = meta?.emissionNm ?? typed.value ?? null;
    const input = { na: na.value ?? null, wavelengthNm, pixelUm, factor, refractiveIndex, zStepUm: dataset.physicalSizeZ };
    return {
      c,
      name: meta?.name ?? `Channel ${c + 1}`,
      colour: meta?.colour ?? "#888888",
      fromMetadata: meta?.emissionNm != null,
      wavelengthNm,
      emissionError: typed.error,
      lateral: checkSampling(input) as Check,
      axial: zStack ? (checkAxialSampling(input) as AxialCheck) : null,
    };
  });
  const plotRows: SamplingPlotRow[] = rows.flatMap((r) =>
    r.lateral.state === "checked" ? [{ label: r.name, colour: r.colour, pixelUm: r.lateral.pixelUm, nyquistPixelUm: r.lateral.nyquistPixelUm, abbeUm: r.lateral.abbeUm }] : [],
  );
  const anyAxial = rows.some((r) => r.axial);

  return (
    <section aria-labelledby="sampling-heading" className="space-y-4 rounded-md border border-paper-200 bg-white p-4 text-sm">
      <div>
        <h2 id="sampling-heading" className="font-semibold">
          Sampling check
        </h2>
        <p className="mt-1 text-paper-700">
          Is the pixel size fine enough for what the objective resolves? Abbe limit λ/(2·NA), Rayleigh 0.61·λ/NA; the Nyquist pixel is the Abbe limit ÷{" "}
          {factor === 2 ? "2 (Pawley, Handbook of Biological Confocal Microscopy, 2006)" : "2.3 (common practice)"}. The NA is not part of the dataset: it stays in
          this page&apos;s address.
        </p>
      </div>
      <div className="grid gap-3 sm:grid-cols-2 lg:grid-cols-4">
        <TextField
          label="Objective NA"
          inputMode="decimal"
          autoComplete="off"
          placeholder="e.g. 1.4"
          value={fields.na}
          error={na.error}
          onChange={(e) => update({ ...fields, na: e.target.value })}
        />
        {dataset.physicalSizeX == null ? (
          <TextField
            label="Pixel size (µm)"
            inputMode="decimal"
            autoComplete="off"
            placeholder="at the sample"
            value={fields.px}
            error={px.error}
            hint="Not in the file; editors can save it in the metadata."
            onChange={(e) => update({ ...fields, px: e.target.value })}
          />
        ) : (
          <div className="space-y-1">
            <p className="text-sm font-medium text-paper-900">Pixel size</p>
            <p className="py-1.5">
              <span className="num">{um(dataset.physicalSizeX, 4)}</span> <span className="text-xs text-paper-700">from the metadata</span>
            </p>
          </div>
        )}
        <SelectField label="Nyquist factor" value={fields.nyq} error={nyq.error} onChange={(e) => update({ ...fields, nyq: e.target.value })}>
          <option value="2">2 — Pawley 2006</option>
          <option value="2.3">2.3 — common practice</option>
        </SelectField>
        {zStack && (
          <SelectField label="Immersion (for z)" value={fields.imm} error={imm.error} onChange={(e) => update({ ...fields, imm: e.target.value })}>
            <option value="">Not given</option>
            {immersionMedia.map((m) => (
              <option key={m.id} value={m.id}>
                {m.label} (n {m.n})
              </option>
            ))}
          </SelectField>
        )}
      </div>
      <div className="overflow-x-auto">
        <table className="w-full" aria-label="Lateral sampling per channel">
          <thead className="text-xs uppercase tracking-wide text-paper-700">
            <tr className="border-b border-paper-200">
              <th scope="col" className="py-2 pr-3 text-left font-medium">Channel</th>
              <th scope="col" className="px-2 py-2 text-right font-medium">Emission</th>
              <th scope="col" className="px-2 py-2 text-right font-medium">Abbe</th>
              <th scope="col" className="px-2 py-2 text-right font-medium">Rayleigh</th>
              <th scope="col" className="px-2 py-2 text-right font-medium">Nyquist pixel</th>
              <th scope="col" className="px-2 py-2 text-right font-medium">Pixel ÷ Nyquist</th>
              <th scope="col" className="py-2 pl-2 text-left font-medium">Verdict</th>
            </tr>
          </thead>
          <tbody className="divide-y divide-paper-200">
            {rows.map((r) => (
              <tr key={r.c}>
                <th scope="row" className="py-2 pr-3 text-left font-normal">
                  <span aria-hidden className="mr-2 inline-block h-3 w-3 rounded-sm align-middle" style={{ background: r.colour }} />
                  {r.name}
                </th>
                <td className="num px-2 py-2 text-right">
                  {r.fromMetadata ? (
                    <>
                      {r.wavelengthNm}
                      <span className="text-paper-700"> nm</span>
                    </>
                  ) : (
                    <EmissionInput
                      name={r.name}
                      value={fields.em[r.c] ?? ""}
                      error={r.emissionError}
                      onChange={(v) => update({ ...fields, em: fields.em.map((e, i) => (i === r.c ? v : e)) })}
                    />
                  )}
                </td>
                {r.lateral.state === "checked" ? (
                  <>
                    <td className="num whitespace-nowrap px-2 py-2 text-right">{um(r.lateral.abbeUm)}</td>
                    <td className="num whitespace-nowrap px-2 py-2 text-right">{um(r.lateral.rayleighUm)}</td>
                    <td className="num whitespace-nowrap px-2 py-2 text-right">{um(r.lateral.nyquistPixelUm)}</td>
                    <td className="num whitespace-nowrap px-2 py-2 text-right">{r.lateral.ratio.toFixed(2)}</td>
                    <td className="py-2 pl-2">
                      <VerdictCell verdict={r.lateral.verdict} />
                    </td>
                  </>
                ) : (
                  <td colSpan={5} className={`px-2 py-2 ${r.lateral.state === "invalid" ? "text-fault-700" : "text-paper-700"}`}>
                    {r.lateral.message}
                  </td>
                )}
              </tr>
            ))}
          </tbody>
        </table>
      </div>
      {rows.some((r) => r.lateral.state === "checked") && (
        <ul className="space-y-1" aria-label="Advice per channel">
          {rows.map((r) =>
            r.lateral.state === "checked" ? (
              <li key={r.c}>
                <span className="font-medium">{r.name}:</span> {r.lateral.advice}
              </li>
            ) : null,
          )}
        </ul>
      )}
      {plotRows.length > 0 && <SamplingPlot rows={plotRows} />}
      {anyAxial && (
        <div className="space-y-1 border-t border-paper-200 pt-3">
          <h3 className="font-medium">Z step (approximate, widefield)</h3>
          <p className="text-xs text-paper-700">
            Axial limit ≈ 2·λ·n/NA² (Inoué, in Pawley 2006); books define it differently and confocal or deconvolved data resolve better, so treat this
            as a rough guide. Z step {dataset.physicalSizeZ != null ? <span className="num">{um(dataset.physicalSizeZ, 4)}</span> : "not in the metadata"}.
          </p>
          <ul className="space-y-1" aria-label="Z sampling per channel">
            {rows.map((r) =>
              r.axial ? (
                <li key={r.c}>
                  <span className="font-medium">{r.name}:</span>{" "}
                  {r.axial.state === "checked" ? (
                    <>
                      <VerdictCell verdict={r.axial.verdict} /> — {r.axial.advice}
                    </>
                  ) : (
                    <span className={r.axial.state === "invalid" ? "text-fault-700" : "text-paper-700"}>{r.axial.message}</span>
                  )}
                </li>
              ) : null,
            )}
          </ul>
        </div>
      )}
    </section>
  );
}

export function SamplingCheck({ dataset }: { dataset: DatasetOut }) {
  // useSearchParams needs a Suspense boundary when a page is rendered ahead of the request.
  return (
    <Suspense fallback={<Loading label="Loading the sampling check…" />}>
      <Inner dataset={dataset} />
    </Suspense>
  );
}
