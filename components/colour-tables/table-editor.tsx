"use client";

import { formatHex, interpolate } from "culori";
import { useDeferredValue, useId, useMemo, useState } from "react";
import { Button } from "@/components/ui/button";
import { FormError, SelectField, TextField } from "@/components/ui/field";
import { ApiError } from "@/lib/client/api";
import { exportUrl, useCreateColourTable, useDeleteColourTable, useUpdateColourTable } from "@/lib/client/colour-tables";
import { buildTableFromStops, hexStringToRgb, sampleStops } from "@/lib/imaging/table-editor";
import type { ColourStop, ColourTableOut, ColourTableScope, InterpolationSpace } from "@/lib/schemas/colour-table";
import { AnalysisPanel, useTableAnalysis } from "./analysis";

/** What the editor holds: a new table, a saved one (editable or not), or a built-in shown for reference. */
export interface Draft {
  id: number | null;
  version: number | null;
  name: string;
  scope: ColourTableScope;
  space: InterpolationSpace;
  /** Null for an imported table kept as its 256 entries (then `entries` is the table). */
  stops: ColourStop[] | null;
  entries: Uint8Array | null;
  readOnly: boolean;
  /** Shown instead of an owner line for built-in tables. */
  builtIn?: boolean;
}

export const DEFAULT_STOPS: ColourStop[] = [
  { position: 0, colour: "#0d1b4c" },
  { position: 0.5, colour: "#3f8f8a" },
  { position: 1, colour: "#f1e6a0" },
];

export function draftFromTable(t: ColourTableOut): Draft {
  return {
    id: t.id,
    version: t.version,
    name: t.name,
    scope: t.scope,
    space: t.space ?? "oklab",
    stops: t.stops,
    entries: t.stops ? null : hexStringToRgb(t.rgb),
    readOnly: !t.canEdit,
  };
}

const scopeLabel: Record<ColourTableScope, string> = {
  private: "Only me",
  lab: "Everyone in this lab",
  public: "Everyone in any lab (public; others may only use and export it)",
};

function copyName(name: string) {
  const suffix = " (copy)";
  return name.slice(0, 120 - suffix.length) + suffix;
}

interface Props {
  labId: number;
  draft: Draft;
  /** Whether the caller may create lab and public tables (presets.edit). */
  mayShare: boolean;
  onChange: (draft: Draft) => void;
  onClose: () => void;
  /** Replaces the draft with the saved version after a 409. */
  onReload: (id: number) => Promise<void>;
}

export function TableEditor({ labId, draft, mayShare, onChange, onClose, onReload }: Props) {
  const create = useCreateColourTable(labId);
  const update = useUpdateColourTable(labId);
  const remove = useDeleteColourTable(labId);
  const [error, setError] = useState<ApiError | Error | null>(null);
  const [saved, setSaved] = useState<string | null>(null);
  const headingId = useId();

  // The table as it will be stored: the server rebuilds it from the same stops with the same code.
  const built = useMemo(() => (draft.stops ? buildTableFromStops(draft.stops, draft.space) : null), [draft.stops, draft.space]);
  const rgb = built?.rgb ?? draft.entries ?? new Uint8Array(768);
  // Analysis trails the inputs by a frame while a colour is being dragged, so typing stays smooth.
  const deferredRgb = useDeferredValue(rgb);
  const analysis = useTableAnalysis(deferredRgb);

  const set = (patch: Partial<Draft>) => {
    setSaved(null);
    onChange({ ...draft, ...patch });
  };
  const setStop = (k: number, patch: Partial<ColourStop>) => set({ stops: draft.stops!.map((s, i) => (i === k ? { ...s, ...patch } : s)) });
  const addStop = () => {
    const stops = draft.stops!;
    // A new stop halfway between the last two rows, in the colour the table already has there.
    const a = stops[stops.length - 2];
    const b = stops[stops.length - 1];
    const position = Math.round(((a.position + b.position) / 2) * 1000) / 1000;
    const colour = formatHex(interpolate([a.colour, b.colour], draft.space === "oklab" ? "oklab" : "lab65")(0.5)) ?? a.colour;
    set({ stops: [...stops.slice(0, -1), { position, colour }, b] });
  };

  const busy = create.isPending || update.isPending || remove.isPending;
  const fields = error instanceof ApiError ? error.fields : {};
  const conflict = error instanceof ApiError && error.status === 409 && !fields.name;

  async function save() {
    setError(null);
    try {
      const table =
        draft.id === null
          ? await create.mutateAsync({ name: draft.name, scope: draft.scope, space: draft.space, stops: draft.stops! })
          : await update.mutateAsync({ id: draft.id, version: draft.version!, name: draft.name, ...(draft.stops ? { space: draft.space, stops: draft.stops } : {}) });
      onChange(draftFromTable(table));
      setSaved(draft.id === null ? "Saved. It is now in the list below and on the bench." : "Saved.");
    } catch (e) {
      setError(e as Error);
    }
  }

  async function destroy() {
    if (draft.id === null || !window.confirm(`Delete the colour table "${draft.name}"? Channels using it on the bench fall back to their colour ramp.`)) return;
    setError(null);
    try {
      await remove.mutateAsync(draft.id);
      onClose();
    } catch (e) {
      setError(e as Error);
    }
  }

  const title = draft.builtIn ? `Built-in: ${draft.name}` : draft.id === null ? "New colour table" : draft.readOnly ? `${draft.name} (read-only)` : `Edit: ${draft.name}`;

  return (
    <section aria-labelledby={headingId} className="mb-8 rounded-md border border-paper-300 bg-white p-5">
      <div className="mb-4 flex flex-wrap items-start justify-between gap-3">
        <h2 id={headingId} className="text-lg font-semibold text-paper-900">
          {title}
        </h2>
        <div className="flex flex-wrap gap-2">
          {draft.id !== null && (
            <>
              <a className="rounded border border-paper-300 px-3 py-1.5 text-sm font-medium text-paper-900 hover:bg-paper-100" href={exportUrl(labId, draft.id, "csv")} download>
                Export CSV
              </a>
              <a className="rounded border border-paper-300 px-3 py-1.5 text-sm font-medium text-paper-900 hover:bg-paper-100" href={exportUrl(labId, draft.id, "json")} download>
                Export JSON
              </a>
            </>
          )}
          {draft.readOnly && (
            <Button
              variant="secondary"
              onClick={() =>
                onChange({ id: null, version: null, name: copyName(draft.name), scope: "private", space: draft.space, stops: draft.stops ?? sampleStops(rgb), entries: null, readOnly: false })
              }
            >
              Make an editable copy
            </Button>
          )}
          <Button variant="ghost" onClick={onClose}>
            Close
          </Button>
        </div>
      </div>

      <div className="grid gap-6 lg:grid-cols-[minmax(0,25rem)_minmax(0,1fr)]">
        <div className="space-y-4">
          {draft.readOnly ? (
            <p className="text-sm text-paper-700">
              {draft.builtIn
                ? "Built-in tables cannot be changed. Make an editable copy to start from this one."
                : "You can use and export this table; only its owner (private) or the editors and owners of its lab can change it."}
            </p>
          ) : (
            <form
              aria-label="Colour table"
              className="space-y-4"
              onSubmit={(e) => {
                e.preventDefault();
                void save();
              }}
            >
              <TextField label="Name" value={draft.name} maxLength={120} required onChange={(e) => set({ name: e.target.value })} error={fields.name} />
              {draft.id === null ? (
                <SelectField label="Shared with" value={draft.scope} onChange={(e) => set({ scope: e.target.value as ColourTableScope })} error={fields.scope}>
                  <option value="private">{scopeLabel.private}</option>
                  {mayShare && <option value="lab">{scopeLabel.lab}</option>}
                  {mayShare && <option value="public">{scopeLabel.public}</option>}
                </SelectField>
              ) : (
                <p className="text-sm text-paper-700">Shared with: {scopeLabel[draft.scope]}</p>
              )}

              {draft.stops ? (
                <>
                  <fieldset>
                    <legend className="text-sm font-medium text-paper-900">Interpolate between stops in</legend>
                    <div className="mt-1 flex gap-4 text-sm">
                      {(["oklab", "cielab"] as const).map((space) => (
                        <label key={space} className="flex items-center gap-1.5">
                          <input type="radio" name="space" value={space} checked={draft.space === space} onChange={() => set({ space })} className="accent-flux-700" />
                          {space === "oklab" ? "OKLab" : "CIELAB"}
                        </label>
                      ))}
                    </div>
                  </fieldset>
                  <fieldset>
                    <legend className="text-sm font-medium text-paper-900">Colour stops</legend>
                    <p className="text-xs text-paper-700">Position 0 is the first entry (black point), 1 the last (white point).</p>
                    <ol className="mt-2 space-y-2">
                      {draft.stops.map((stop, k) => {
                        const end = k === 0 || k === draft.stops!.length - 1;
                        return (
                          <li key={k} className="flex items-center gap-2">
                            <input
                              type="color"
                              aria-label={`Colour of stop ${k + 1}`}
                              value={stop.colour}
                              onChange={(e) => setStop(k, { colour: e.target.value.toLowerCase() })}
                              title={stop.colour}
                              className="h-8 w-10 shrink-0 cursor-pointer rounded border border-paper-300 bg-white"
                            />
                            <span className="num w-14 shrink-0 text-xs text-paper-700">{stop.colour}</span>
                            <input
                              type="range"
                              aria-label={`Position of stop ${k + 1} (slider)`}
                              min={0}
                              max={1}
                              step={0.001}
                              value={stop.position}
                              disabled={end}
                              onChange={(e) => setStop(k, { position: Number(e.target.value) })}
                              className="min-w-0 flex-1 accent-flux-700 disabled:opacity-40"
                            />
                            <input
                              type="number"
                              aria-label={`Position of stop ${k + 1}`}
                              min={0}
                              max={1}
                              step={0.01}
                              value={stop.position}
                              disabled={end}
                              onChange={(e) => Number.isFinite(e.target.valueAsNumber) && setStop(k, { position: Math.min(1, Math.max(0, e.target.valueAsNumber)) })}
                              className="num w-16 shrink-0 rounded border border-paper-300 px-1.5 py-1 text-right text-sm disabled:bg-paper-100"
                            />
                            <Button
                              type="button"
                              variant="ghost"
                              aria-label={`Remove stop ${k + 1}`}
                              disabled={end}
                              onClick={() => set({ stops: draft.stops!.filter((_, i) => i !== k) })}
                              className={`shrink-0 px-2 ${end ? "invisible" : ""}`}
                            >
                              Remove
                            </Button>
                          </li>
                        );
                      })}
                    </ol>
                    <Button type="button" variant="secondary" className="mt-2" onClick={addStop} disabled={draft.stops.length >= 32}>
                      Add stop
                    </Button>
                    {fields.stops && <p className="mt-1 text-xs font-medium text-fault-700">{fields.stops}</p>}
                  </fieldset>
                  {built && built.gamutMapped.length > 0 && (
                    <p className="text-xs text-paper-700">
                      {built.gamutMapped.length} of 256 entries lay outside the sRGB gamut between your stops; their chroma was lowered at the same lightness and hue.
                    </p>
                  )}
                </>
              ) : (
                <div className="rounded border border-paper-300 bg-paper-50 p-3 text-sm text-paper-700">
                  This table was imported as 256 entries, without stops; it is kept exactly as imported.
                  <Button type="button" variant="secondary" className="mt-2" onClick={() => set({ stops: sampleStops(rgb), entries: null })}>
                    Replace with editable stops
                  </Button>
                </div>
              )}

              {conflict && (
                <div role="alert" className="rounded border border-caution-700/30 bg-caution-100 px-3 py-2 text-sm text-caution-700">
                  Someone else saved this colour table since you opened it.{" "}
                  <button type="button" className="underline" onClick={() => draft.id !== null && void onReload(draft.id).then(() => setError(null))}>
                    Load their version
                  </button>
                </div>
              )}
              {error && !conflict && !fields.name && <FormError message={error.message + (Object.keys(fields).length ? ` ${Object.values(fields).join(" ")}` : "")} />}
              {saved && (
                <p role="status" className="text-sm text-ok-700">
                  {saved}
                </p>
              )}
              <div className="flex gap-2">
                <Button type="submit" busy={create.isPending || update.isPending} disabled={busy}>
                  {draft.id === null ? "Save colour table" : "Save changes"}
                </Button>
                {draft.id !== null && (
                  <Button type="button" variant="danger" onClick={() => void destroy()} disabled={busy}>
                    Delete
                  </Button>
                )}
              </div>
            </form>
          )}
        </div>
        <AnalysisPanel rgb={deferredRgb} name={draft.name || "New colour table"} analysis={analysis} />
      </div>
    </section>
  );
}
