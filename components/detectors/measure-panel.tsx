"use client";

import { useId, useState } from "react";
import { Button } from "@/components/ui/button";
import { FormError, SelectField } from "@/components/ui/field";
import { Loading } from "@/components/ui/states";
import { useDatasets } from "@/lib/client/datasets";
import { usePhotonTransfer } from "@/lib/client/detector-profiles";
import type { PhotonTransferOut } from "@/lib/schemas/detector-profile";
import { PhotonTransferPlot, ResidualsPlot } from "./photon-transfer-plot";

const n = (v: number, digits = 2) => v.toLocaleString("en", { minimumFractionDigits: digits, maximumFractionDigits: digits });
const sig = (v: number, digits = 4) => Number(v.toPrecision(digits)).toLocaleString("en", { maximumSignificantDigits: digits });

function Number_({ label, value, unit, note }: { label: string; value: string; unit?: string; note?: string }) {
  return (
    <>
      <dt className="text-paper-700">{label}</dt>
      <dd className="num text-right">
        {value}
        {unit && <span className="ml-1 font-light text-paper-700">{unit}</span>}
        {note && <span className="block text-xs text-paper-700">{note}</span>}
      </dd>
    </>
  );
}

/** The fit's numbers, plots and levels, as the endpoint returned them. */
export function PhotonTransferResult({ result }: { result: PhotonTransferOut }) {
  const { fit } = result;
  const points = fit.levels.map((l) => ({ pages: l.pages, signalDn: l.signalDn, varianceDn2: l.varianceDn2, inFit: l.inFit }));
  return (
    <div className="space-y-5">
      <div className="grid gap-6 lg:grid-cols-[1fr_19rem]">
        <div className="space-y-4">
          <figure>
            <PhotonTransferPlot points={points} gainDnPerE={fit.gainDnPerE} fitLimitDn={fit.fit.maxSignalDn} saturationIndex={fit.saturation.level} />
            <figcaption className="mt-1 text-xs text-paper-700">
              Photon transfer, linear axes. Filled points were fitted (up to {fit.fit.fraction * 100} % of saturation); the line through the origin has slope K.
            </figcaption>
          </figure>
          <figure>
            <ResidualsPlot points={points} relativeResiduals={fit.levels.map((l) => l.relativeResidual)} />
            <figcaption className="mt-1 text-xs text-paper-700">Residuals: how far each level lies from the line, in % of the fitted variance.</figcaption>
          </figure>
        </div>
        <section aria-label="Fit results" className="h-fit rounded-md border border-paper-200 bg-paper-50 p-4 text-sm">
          <h3 className="mb-2 font-semibold">Result</h3>
          <dl className="grid grid-cols-[auto_1fr] gap-x-3 gap-y-1.5">
            <Number_ label="Gain K" value={sig(fit.gainDnPerE)} unit="DN/e⁻" note={fit.gainStdErrorDnPerE !== null ? `± ${sig(fit.gainStdErrorDnPerE, 2)} SE` : undefined} />
            <Number_ label="Inverse gain" value={sig(fit.gainEPerDn)} unit="e⁻/DN" />
            <Number_ label="Offset (dark mean)" value={n(fit.offsetDn)} unit="DN" />
            <Number_ label="Read noise σd" value={`${fit.readNoiseIsUpperLimit ? "< " : ""}${n(fit.readNoiseE)}`} unit="e⁻" note={`dark noise ${n(fit.darkNoiseDn, 3)} DN`} />
            <Number_ label="Saturation capacity" value={`${fit.saturation.reached ? "" : "≥ "}${Math.round(fit.saturation.capacityE).toLocaleString("en")}`} unit="e⁻" />
            <Number_ label="Maximum SNR √μe.sat" value={n(fit.maxSnr, 1)} />
            <Number_ label="Levels fitted" value={`${fit.fit.levels} of ${fit.levels.length}`} />
            <Number_ label="R² (through origin)" value={fit.fit.rSquared.toFixed(5)} />
            <Number_ label="Largest fitted residual" value={n(fit.fit.maxAbsRelativeResidual * 100)} unit="%" />
            <Number_ label="Pixels per frame" value={fit.pixelsPerFrame.toLocaleString("en")} />
          </dl>
          <p className="mt-3 text-xs text-paper-700">
            EMVA 1288 (Release 4.0 Linear, 2021): variance from the difference of each pair, dark level and dark variance subtracted, fit through the origin; σd = √(σ²y.dark − 1/12)/K.
          </p>
        </section>
      </div>
      {fit.warnings.length > 0 && (
        <ul aria-label="Cautions" className="space-y-1 rounded border border-caution-700/30 bg-caution-100 px-3 py-2 text-sm text-caution-700">
          {fit.warnings.map((w) => (
            <li key={w}>Caution: {w}</li>
          ))}
        </ul>
      )}
      <details className="rounded border border-paper-200 bg-white">
        <summary className="cursor-pointer px-3 py-2 text-sm font-medium">Levels ({fit.levels.length}) and the dark pair</summary>
        <div className="overflow-x-auto">
          <table className="w-full text-sm">
            <caption className="sr-only">Mean and temporal variance of each pair</caption>
            <thead className="border-b border-paper-200 bg-paper-100 text-xs uppercase tracking-wide text-paper-700">
              <tr>
                {["Pages", "Mean (DN)", "Above dark (DN)", "Variance above dark (DN²)", "A − B (DN)", "Residual", "Fitted"].map((h) => (
                  <th key={h} scope="col" className="px-3 py-2 text-right font-medium first:text-left">
                    {h}
                  </th>
                ))}
              </tr>
            </thead>
            <tbody className="divide-y divide-paper-200">
              <tr>
                <td className="num px-3 py-1.5">
                  {fit.dark.pages[0]}, {fit.dark.pages[1]} (dark)
                </td>
                <td className="num px-3 py-1.5 text-right">{n(fit.dark.meanDn)}</td>
                <td className="num px-3 py-1.5 text-right">—</td>
                <td className="num px-3 py-1.5 text-right">{n(fit.dark.varianceDn2, 3)} (σ²y.dark)</td>
                <td className="num px-3 py-1.5 text-right">{n(fit.dark.pairDifferenceDn, 3)}</td>
                <td className="px-3 py-1.5" />
                <td className="px-3 py-1.5" />
              </tr>
              {fit.levels.map((l, i) => (
                <tr key={l.index} className={i === fit.saturation.level ? "bg-caution-100/50" : undefined}>
                  <td className="num px-3 py-1.5">
                    {l.pages[0]}, {l.pages[1]}
                    {i === fit.saturation.level && <span className="ml-1 text-xs text-caution-700">saturation</span>}
                  </td>
                  <td className="num px-3 py-1.5 text-right">{n(l.meanDn)}</td>
                  <td className="num px-3 py-1.5 text-right">{n(l.signalDn)}</td>
                  <td className="num px-3 py-1.5 text-right">{n(l.varianceDn2)}</td>
                  <td className="num px-3 py-1.5 text-right">{n(l.pairDifferenceDn, 3)}</td>
                  <td className="num px-3 py-1.5 text-right">{n(l.relativeResidual * 100)} %</td>
                  <td className="px-3 py-1.5 text-right">{l.inFit ? "yes" : "no"}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      </details>
    </div>
  );
}

/**
 * "Measure from a dataset": pick a dataset laid out as a dark pair followed by flat pairs, run the
 * fit on the server, look at it, and (editors) save it as a profile.
 */
export function MeasurePanel({ labId, mayEdit, onSave, onClose }: { labId: number; mayEdit: boolean; onSave: (result: PhotonTransferOut) => void; onClose: () => void }) {
  const headingId = useId();
  const datasets = useDatasets(labId, { status: "ready", pageSize: "100", sort: "createdAt", dir: "desc" });
  const run = usePhotonTransfer();
  const [datasetId, setDatasetId] = useState<number | null>(null);
  const [c, setC] = useState(0);
  const chosen = datasets.data?.datasets.find((d) => d.id === datasetId) ?? null;
  const result = run.data && run.data.datasetId === datasetId && run.data.c === c ? run.data : null;

  return (
    <section aria-labelledby={headingId} className="mb-8 space-y-4 rounded-md border border-paper-300 bg-white p-5">
      <div className="flex flex-wrap items-start justify-between gap-3">
        <div>
          <h2 id={headingId} className="text-lg font-semibold text-paper-900">
            Measure from a dataset
          </h2>
          <p className="mt-1 max-w-prose text-sm text-paper-700">
            Photon transfer (EMVA 1288 mean–variance method) needs frames in this order: a dark pair (shutter closed), then pairs of evenly lit flat frames at increasing exposure,
            best from dark to past saturation. The fit is computed on the server from the raw counts; nothing is saved until you save it as a profile.
          </p>
        </div>
        <Button type="button" variant="ghost" onClick={onClose}>
          Close
        </Button>
      </div>
      {datasets.isPending ? (
        <Loading label="Loading the lab's datasets…" />
      ) : datasets.isError ? (
        <FormError message={`The datasets could not be loaded: ${datasets.error.message}`} />
      ) : datasets.data.datasets.length === 0 ? (
        <p className="text-sm text-paper-700">No ready datasets in this lab yet. Upload a photon-transfer series on the Datasets page first.</p>
      ) : (
        <form
          className="flex flex-wrap items-end gap-3"
          onSubmit={(e) => {
            e.preventDefault();
            if (datasetId !== null) run.mutate({ datasetId, c });
          }}
        >
          <div className="w-96 max-w-full">
            <SelectField
              label="Dataset"
              value={datasetId ?? ""}
              onChange={(e) => {
                setDatasetId(e.target.value ? Number(e.target.value) : null);
                setC(0);
                run.reset();
              }}
            >
              <option value="">Choose a dataset…</option>
              {datasets.data.datasets.map((d) => (
                <option key={d.id} value={d.id}>
                  {d.title} ({d.planeCount ?? "?"} planes)
                </option>
              ))}
            </SelectField>
          </div>
          {chosen && (chosen.sizeC ?? 1) > 1 && (
            <div className="w-48">
              <SelectField label="Channel" value={c} onChange={(e) => setC(Number(e.target.value))}>
                {Array.from({ length: chosen.sizeC ?? 1 }, (_, i) => (
                  <option key={i} value={i}>
                    {chosen.channels?.[i]?.name ?? `Channel ${i + 1}`}
                  </option>
                ))}
              </SelectField>
            </div>
          )}
          <Button type="submit" busy={run.isPending} disabled={datasetId === null}>
            Run the fit
          </Button>
        </form>
      )}
      {run.isPending && <Loading label={`Reading ${chosen?.planeCount ?? ""} planes and fitting…`} />}
      {run.error && <FormError message={run.error.message} />}
      {result && (
        <>
          <PhotonTransferResult result={result} />
          <div className="flex flex-wrap items-center gap-3">
            {mayEdit ? (
              <Button type="button" onClick={() => onSave(result)}>
                Save as profile
              </Button>
            ) : (
              <p className="text-sm text-paper-700">Editors and owners can save this as a detector profile.</p>
            )}
          </div>
        </>
      )}
    </section>
  );
}
