"use client";

import { useMemo } from "react";
import type { CvdKind } from "@/lib/imaging/cvd";
import { checkLightness, cvdSafety, lightnessProfile, simulateTable, type CvdVerdict, type LightnessCheck } from "@/lib/imaging/table-editor";
import { LightnessPlot } from "./lightness-plot";
import { Ramp } from "./ramp";

export interface TableAnalysis {
  profile: Float64Array;
  lightness: LightnessCheck;
  simulated: Record<CvdKind, Uint8Array>;
  verdict: CvdVerdict;
}

export function analyseTable(rgb: Uint8Array): TableAnalysis {
  const profile = lightnessProfile(rgb);
  return {
    profile,
    lightness: checkLightness(profile),
    simulated: { protanopia: simulateTable(rgb, "protanopia"), deuteranopia: simulateTable(rgb, "deuteranopia"), tritanopia: simulateTable(rgb, "tritanopia") },
    verdict: cvdSafety(rgb),
  };
}

export function useTableAnalysis(rgb: Uint8Array): TableAnalysis {
  return useMemo(() => analyseTable(rgb), [rgb]);
}

const visionLabel = { normal: "normal vision", protanopia: "protanopia", deuteranopia: "deuteranopia", tritanopia: "tritanopia" } as const;

/** The computed verdict as a word and an icon (never colour alone), with the reason on hover. */
export function CvdBadge({ verdict }: { verdict: CvdVerdict }) {
  const { worst } = verdict;
  const why = `Smallest step: ${worst.distance.toFixed(1)} ΔE00 between entries ${worst.index} and ${worst.index + verdict.stride} (${visionLabel[worst.vision]}); safe needs at least ${verdict.threshold}.`;
  return verdict.safe ? (
    <span title={why} className="inline-flex items-center gap-1 whitespace-nowrap rounded bg-ok-100 px-1.5 py-0.5 text-xs font-medium text-ok-700">
      <span aria-hidden>✓</span> Colour-vision safe
    </span>
  ) : (
    <span title={why} className="inline-flex items-center gap-1 whitespace-nowrap rounded bg-caution-100 px-1.5 py-0.5 text-xs font-medium text-caution-700">
      <span aria-hidden>✕</span> Not colour-vision safe
    </span>
  );
}

export function LightnessWord({ check }: { check: LightnessCheck }) {
  return check.direction === "neither" ? (
    <span className="whitespace-nowrap text-caution-700">
      <span aria-hidden>⚠ </span>not monotonic
    </span>
  ) : (
    <span className="whitespace-nowrap">
      <span aria-hidden>↗ </span>
      {check.direction}
    </span>
  );
}

/** Ramp, L* profile with its monotonic note, the three simulations and the verdict with its numbers. */
export function AnalysisPanel({ rgb, name, analysis }: { rgb: Uint8Array; name: string; analysis: TableAnalysis }) {
  const { lightness, verdict } = analysis;
  const reversal = lightness.worstReversal;
  return (
    <div className="space-y-5">
      <section aria-label="Ramp">
        <h3 className="mb-1 text-sm font-semibold text-paper-900">Ramp</h3>
        <Ramp rgb={rgb} label={`${name}: the 256 entries from first to last`} className="h-10" />
      </section>

      <section aria-label="Lightness profile">
        <h3 className="mb-1 text-sm font-semibold text-paper-900">Lightness (L*) profile</h3>
        <LightnessPlot profile={analysis.profile} check={lightness} />
        {lightness.direction === "neither" ? (
          <p role="status" className="mt-1 rounded border border-caution-700/30 bg-caution-100 px-2 py-1 text-sm text-caution-700">
            <span aria-hidden>⚠ </span>
            <strong>Lightness does not rise monotonically</strong>
            {reversal ? `: L* goes back by ${reversal.amount.toFixed(1)} from entry ${reversal.from} to entry ${reversal.to} (tolerance 0.5).` : " (the table is flat)."} Readers
            may see edges or order that are not in the data.
          </p>
        ) : (
          <p role="status" className="mt-1 text-sm text-ok-700">
            <span aria-hidden>✓ </span>
            <strong>Lightness {lightness.direction === "rising" ? "rises" : "falls"} monotonically</strong>, L* {lightness.first.toFixed(1)} → {lightness.last.toFixed(1)}.
          </p>
        )}
      </section>

      <section aria-label="Colour-vision preview">
        <h3 className="mb-1 text-sm font-semibold text-paper-900">Colour-vision preview</h3>
        <div className="space-y-1.5">
          {(["protanopia", "deuteranopia", "tritanopia"] as const).map((kind) => (
            <div key={kind} className="grid grid-cols-[7rem_1fr] items-center gap-2 text-xs text-paper-700">
              <span className="capitalize">{kind}</span>
              <Ramp rgb={analysis.simulated[kind]} label={`${name} as seen with ${kind} (simulated)`} className="h-5" />
            </div>
          ))}
        </div>
        <p className="mt-1 text-xs text-paper-700">Simulated with Machado, Oliveira &amp; Fernandes (2009), full severity, in linear RGB. The tritan model is the least reliable of the three.</p>
      </section>

      <section aria-label="Colour-vision verdict" className="space-y-1">
        <div className="flex items-center gap-2">
          <h3 className="text-sm font-semibold text-paper-900">Verdict</h3>
          <CvdBadge verdict={verdict} />
        </div>
        <table className="text-xs text-paper-700">
          <caption className="sr-only">Smallest step per vision</caption>
          <tbody>
            {(["normal", "protanopia", "deuteranopia", "tritanopia"] as const).map((v) => {
              const s = verdict.byVision[v];
              const low = s.distance < verdict.threshold;
              return (
                <tr key={v} className={low ? "font-semibold text-caution-700" : ""}>
                  <th scope="row" className="pr-3 text-left font-normal">
                    {visionLabel[v][0].toUpperCase() + visionLabel[v].slice(1)}
                  </th>
                  <td className="num pr-2 text-right">{s.distance.toFixed(1)} ΔE00</td>
                  <td className="num">
                    entries {s.index}–{s.index + verdict.stride}
                    {low && " (below threshold)"}
                  </td>
                </tr>
              );
            })}
          </tbody>
        </table>
        <p className="text-xs text-paper-700">
          Safe means every entry differs from the one {verdict.stride} places on by at least {verdict.threshold} CIEDE2000 units with normal vision and under all three
          simulations, so at least 8 steps along the ramp stay distinguishable. Our rule, explained in the README.
        </p>
      </section>
    </div>
  );
}
