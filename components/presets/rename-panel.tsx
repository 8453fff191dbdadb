"use client";

import { useEffect, useId, useState } from "react";
import { Button } from "@/components/ui/button";
import { FormError, TextField } from "@/components/ui/field";
import { ApiError } from "@/lib/client/api";
import { fetchPreset, useRenamePreset } from "@/lib/client/presets";
import type { PresetOut } from "@/lib/schemas/preset";
import { PresetPanel } from "./panel";

type Stale = { kind: "stale" } | { kind: "reloaded"; current: PresetOut } | { kind: "gone" };

/**
 * Renames one preset. The save names the version the person started from, and that version is kept
 * here rather than taken from the list (which refreshes in the background): a save over someone
 * else's newer version gets 409, and only an explicit Reload moves this form onto the new version.
 */
export function RenamePanel({ labId, preset, onDone, onCancel }: { labId: number; preset: PresetOut; onDone: (name: string) => void; onCancel: () => void }) {
  const rename = useRenamePreset(labId);
  const [base, setBase] = useState({ version: preset.version, name: preset.name });
  const [draft, setDraft] = useState(preset.name);
  const [stale, setStale] = useState<Stale | null>(null);
  const [reloading, setReloading] = useState(false);
  const [reloadError, setReloadError] = useState<string | null>(null);
  const inputId = useId();
  const reloadId = useId();
  // The shared field and button components take no ref, so focus goes by id.
  const focus = (id: string) => document.getElementById(id)?.focus();

  useEffect(() => {
    focus(inputId);
    (document.getElementById(inputId) as HTMLInputElement | null)?.select();
  }, [inputId]);

  // After a refused (stale) save the person's next step is Reload: the keyboard goes there once the
  // button is on screen (an effect after the render, not a timer that can run before it).
  useEffect(() => {
    if (stale?.kind === "stale") focus(reloadId);
  }, [stale, reloadId]);

  const error = rename.error instanceof ApiError ? rename.error : rename.error ? new ApiError(0, "internal", rename.error.message) : null;
  const nameError = error?.status === 409 ? error.fields.name : error?.status === 400 ? error.fields.name : undefined;
  const otherError = error && !nameError && error.status !== 409 && error.status !== 404 ? error.message : null;

  const save = () => {
    const name = draft.trim();
    if (!name) return;
    setReloadError(null);
    rename.mutate(
      { id: preset.id, version: base.version, name },
      {
        onSuccess: (saved) => onDone(saved.name),
        onError: (e) => {
          if (e instanceof ApiError && e.status === 409 && !e.fields.name) {
            setStale({ kind: "stale" });
          } else if (e instanceof ApiError && e.status === 404) {
            setStale({ kind: "gone" });
          } else {
            // Save was disabled while busy, which drops the focus; put it back on the field to correct.
            requestAnimationFrame(() => focus(inputId));
          }
        },
      },
    );
  };

  const reload = async () => {
    setReloading(true);
    setReloadError(null);
    try {
      const current = await fetchPreset(labId, preset.id);
      setBase({ version: current.version, name: current.name });
      setStale({ kind: "reloaded", current });
      rename.reset();
      focus(inputId);
    } catch (e) {
      if (e instanceof ApiError && e.status === 404) setStale({ kind: "gone" });
      else setReloadError(e instanceof Error ? e.message : "The preset could not be reloaded.");
    } finally {
      setReloading(false);
    }
  };

  return (
    <PresetPanel title={<>Rename “{base.name}”</>} onCancel={onCancel}>
      <form
        className="mt-3 flex flex-wrap items-start gap-3"
        onSubmit={(e) => {
          e.preventDefault();
          save();
        }}
      >
        <div className="w-80">
          <TextField
            id={inputId}
            label="New name"
            value={draft}
            maxLength={120}
            onChange={(e) => setDraft(e.target.value)}
            error={nameError}
            disabled={stale?.kind === "gone"}
          />
        </div>
        <div className="flex gap-2 pt-6">
          <Button type="submit" busy={rename.isPending} disabled={!draft.trim() || stale?.kind === "stale" || stale?.kind === "gone"}>
            Save
          </Button>
          <Button type="button" variant="secondary" onClick={onCancel}>
            Cancel
          </Button>
        </div>
      </form>

      {stale?.kind === "stale" && (
        <div role="alert" className="mt-3 flex flex-wrap items-center gap-3 rounded border border-caution-700/30 bg-caution-100 px-3 py-2 text-sm text-caution-700">
          <span>
            <span className="font-semibold">Not saved: someone else changed this preset after you opened it.</span> Reload to see their version; your new
            name stays in the field so you can save it again.
          </span>
          <Button id={reloadId} type="button" variant="secondary" busy={reloading} onClick={() => void reload()}>
            Reload
          </Button>
        </div>
      )}
      {stale?.kind === "reloaded" && (
        <p role="status" className="mt-3 rounded border border-paper-200 bg-paper-50 px-3 py-2 text-sm text-paper-900">
          Reloaded: the preset is now called “{stale.current.name}” (version <span className="num">{stale.current.version}</span>). Save to rename it to “
          {draft.trim()}” anyway, or Cancel to keep their name.
        </p>
      )}
      {stale?.kind === "gone" && <FormError message="This preset no longer exists; someone deleted it. Cancel to go back to the list." />}
      <FormError message={reloadError ?? otherError} />
    </PresetPanel>
  );
}
