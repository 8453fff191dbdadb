"use client";

import { ErrorState, Loading } from "@/components/ui/states";
import { useCompression } from "@/lib/client/planner";
import { CLASSIC_TIFF_LIMIT, fieldOfViewChange, fieldOfViewUm, formatBinary, formatDecimal, formatExactBytes, type StoragePlan } from "@/lib/imaging/planner";
import { pixelAtSampleUm, sig } from "@/lib/imaging/sampling";
import type { PlannerQuery } from "@/lib/schemas/planner";

/** 43 200 s → "12 h"; 93 600 s → "1 d 2 h"; 90 s → "1 min 30 s". */
export function formatSpan(seconds: number): string {
  const parts: string[] = [];
  let rest = Math.round(seconds * 1000) / 1000;
  for (const [unit, size] of [["d", 86_400], ["h", 3600], ["min", 60]] as const) {
    const n = Math.floor(rest / size);
    if (n) parts.push(`${n} ${unit}`);
    rest -= n * size;
  }
  if (rest || !parts.length) parts.push(`${sig(rest)} s`);
  return parts.join(" ");
}

const count = (n: number) => n.toLocaleString("en");

function Row({ label, detail, bytes }: { label: string; detail: string; bytes: number | null }) {
  return (
    <tr>
      <th scope="row" className="px-4 py-2 text-left font-medium">
        {label}
        <span className="block text-xs font-normal text-paper-700">{detail}</span>
      </th>
      {bytes == null ? (
        <td colSpan={3} className="px-3 py-2 text-right text-paper-700">
          needs an interval
        </td>
      ) : (
        <>
          <td className="num whitespace-nowrap px-3 py-2 text-right text-paper-700">{formatExactBytes(bytes)}</td>
          <td className="num whitespace-nowrap px-3 py-2 text-right">{formatDecimal(bytes)}</td>
          <td className="num whitespace-nowrap px-3 py-2 text-right">{formatBinary(bytes)}</td>
        </>
      )}
    </tr>
  );
}

export function StorageTable({ plan, query }: { plan: StoragePlan; query: PlannerQuery }) {
  const { w, h, bpp, c, z, p } = query;
  return (
    <section className="space-y-2">
      <div className="overflow-x-auto rounded-md border border-paper-200 bg-white">
        <table className="w-full text-sm" aria-label="Storage needed">
          <caption className="px-4 pt-3 text-left text-sm font-semibold">Storage needed, uncompressed</caption>
          <thead className="text-xs uppercase tracking-wide text-paper-700">
            <tr className="border-b border-paper-200">
              <th scope="col" className="px-4 py-2 text-left font-medium">For</th>
              <th scope="col" className="px-3 py-2 text-right font-medium">Bytes</th>
              <th scope="col" className="px-3 py-2 text-right font-medium">
                Decimal <span className="block normal-case">(1 kB = 1000 B)</span>
              </th>
              <th scope="col" className="px-3 py-2 text-right font-medium">
                Binary <span className="block normal-case">(1 KiB = 1024 B)</span>
              </th>
            </tr>
          </thead>
          <tbody className="divide-y divide-paper-200">
            <Row label="One plane" detail={`${count(w)} × ${count(h)} px × ${bpp} B`} bytes={plan.bytesPerPlane} />
            <Row label="One stack" detail={`${c} channel${c === 1 ? "" : "s"} × ${count(z)} z-slice${z === 1 ? "" : "s"}, one position`} bytes={plan.bytesPerStack} />
            <Row label="One time point" detail={`${count(p)} position${p === 1 ? "" : "s"}`} bytes={plan.bytesPerTimePoint} />
            <Row label="Per hour" detail="while the time-lapse runs" bytes={plan.bytesPerHour} />
            <Row label="Per day" detail="while the time-lapse runs" bytes={plan.bytesPerDay} />
            <Row
              label="Total"
              detail={`${count(plan.timePoints)} time point${plan.timePoints === 1 ? "" : "s"}${plan.spanS != null && plan.timePoints > 1 ? `, last at ${formatSpan(plan.spanS)}` : ""} · ${count(plan.totalPlanes)} planes`}
              bytes={plan.totalBytes}
            />
          </tbody>
        </table>
      </div>
      <p className="text-xs text-paper-700">
        Bytes = width × height × bytes per pixel × channels × z-slices × positions × time points (common practice). Time points run from 0 to the
        end of the duration, both ends included.
        {plan.totalBytes > CLASSIC_TIFF_LIMIT && " Kept in one file, this is more than 4 GiB: it must be written as BigTIFF (classic TIFF stops at 4 GiB)."}
      </p>
    </section>
  );
}

export function CompressionNote({ labId, totalBytes }: { labId: number; totalBytes: number }) {
  const stats = useCompression(labId);
  return (
    <section aria-labelledby="compression-heading" className="space-y-2 rounded-md border border-paper-200 bg-white p-4 text-sm">
      <h2 id="compression-heading" className="font-semibold">
        Expected lossless compression
      </h2>
      {stats.isPending ? (
        <Loading label="Reading the lab's datasets…" />
      ) : stats.isError ? (
        <ErrorState error={stats.error} retry={() => stats.refetch()} />
      ) : !stats.data.overall ? (
        <p className="text-paper-700">This lab has no ready datasets yet, so there is nothing to learn a compression ratio from; the sizes above are uncompressed.</p>
      ) : (
        <>
          <p className="text-paper-700">
            From this lab&apos;s {count(stats.data.overall.datasets)} ready dataset{stats.data.overall.datasets === 1 ? "" : "s"}: raw pixel bytes ÷ stored
            file size, per codec.
          </p>
          <ul className="space-y-1">
            {stats.data.codecs.map((codec) => (
              <li key={codec.codec}>
                <span className="font-medium">{codec.codec === "none" ? "Uncompressed" : codec.codec}</span>
                {" — "}
                {codec.ratio == null ? (
                  "no ratio"
                ) : (
                  <>
                    <span className="num">{codec.ratio.toFixed(2)}×</span> over {count(codec.datasets)} dataset{codec.datasets === 1 ? "" : "s"}
                    {codec.codec === "none" ? (
                      <span className="text-paper-700"> (headers and metadata make files a little larger than their pixels)</span>
                    ) : (
                      <>
                        : the total would be about <span className="num">{formatDecimal(totalBytes / codec.ratio)}</span> (
                        <span className="num">{formatBinary(totalBytes / codec.ratio)}</span>)
                      </>
                    )}
                  </>
                )}
              </li>
            ))}
          </ul>
          <p className="text-xs text-paper-700">A rough guide: how well pixels compress depends on the content (noise compresses poorly, empty background well).</p>
        </>
      )}
    </section>
  );
}

function times(x: number): string {
  return x >= 1 ? `${sig(x)}×` : `1/${sig(1 / x)} (${sig(x)}×)`;
}

export function FieldOfViewResult({ query }: { query: PlannerQuery }) {
  const { m1, m2, w, h, pitch } = query;
  const change = fieldOfViewChange(m1, m2);
  return (
    <section aria-labelledby="fov-heading" className="space-y-2 rounded-md border border-paper-200 bg-white p-4 text-sm">
      <h2 id="fov-heading" className="font-semibold">
        Field of view
      </h2>
      <p>
        From <span className="num">{sig(m1)}×</span> to <span className="num">{sig(m2)}×</span> the field is <span className="num">{times(change.linear)}</span> as
        wide and tall and covers <span className="num font-semibold">{times(change.area)}</span> the area.
      </p>
      {pitch !== undefined && (
        <table className="text-sm" aria-label="Field of view at the sample">
          <thead className="text-xs uppercase tracking-wide text-paper-700">
            <tr>
              <th scope="col" className="pr-4 text-left font-medium">Magnification</th>
              <th scope="col" className="pr-4 text-right font-medium">Pixel at the sample</th>
              <th scope="col" className="pr-4 text-right font-medium">Field</th>
              <th scope="col" className="text-right font-medium">Area</th>
            </tr>
          </thead>
          <tbody>
            {[m1, m2].map((m, i) => {
              const fov = fieldOfViewUm(w, h, pitch, m);
              return (
                <tr key={i}>
                  <th scope="row" className="num pr-4 text-left font-normal">{sig(m)}×</th>
                  <td className="num pr-4 text-right">{sig(pixelAtSampleUm(pitch, m))} µm</td>
                  <td className="num pr-4 text-right">
                    {sig(fov.widthUm)} × {sig(fov.heightUm)} µm
                  </td>
                  <td className="num text-right">{sig(fov.areaMm2)} mm²</td>
                </tr>
              );
            })}
          </tbody>
        </table>
      )}
      <p className="text-xs text-paper-700">
        Area scales with 1/M² (geometry). The field at the sample is the camera&apos;s size × pixel pitch ÷ total magnification; the microscope&apos;s own field
        stop may cut it smaller.
      </p>
    </section>
  );
}
