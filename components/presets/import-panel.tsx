"use client";

import { useEffect, useId, useRef, useState } from "react";
import { Button } from "@/components/ui/button";
import { FormError, SelectField } from "@/components/ui/field";
import { ApiError } from "@/lib/client/api";
import { useImportPresets, type ImportOutcome } from "@/lib/client/presets";
import { parseProblemText } from "@/lib/preset-file";
import { MAX_FILE_CHARS } from "@/lib/schemas/preset-file";
import { PresetPanel } from "./panel";

type Scope = "private" | "lab";

/** Messages of a refused file, keyed by JSONPath, in the order of the file. */
function ProblemList({ fields, label }: { fields: Record<string, string>; label: string }) {
  return (
    <ol aria-label={label} className="mt-2 space-y-1.5 text-sm">
      {Object.entries(fields).map(([path, text]) => {
        const p = parseProblemText(text);
        return (
          <li key={path} className="rounded border border-fault-700/20 bg-white px-2.5 py-1.5">
            {p ? (
              <>
                <span className="num font-semibold text-fault-700">
                  Line {p.line}, column {p.column}
                </span>{" "}
                <code className="ml-1 rounded bg-paper-100 px-1 text-xs text-paper-700">{path.replace(/ \(\d+\)$/, "")}</code>
                <span className="mt-0.5 block text-paper-900">{p.message}</span>
              </>
            ) : (
              <span className="text-paper-900">{text}</span>
            )}
          </li>
        );
      })}
    </ol>
  );
}

/**
 * Import of a presets file: the file is read in the browser and its text sent as is, so the server's
 * line numbers match the person's file. Nothing is stored unless every preset in it is valid.
 */
export function ImportPanel({
  labId,
  mayShare,
  onDone,
  onCancel,
}: {
  labId: number;
  /** Whether the person may add lab presets (presets.edit). */
  mayShare: boolean;
  onDone: (outcome: ImportOutcome, scope: Scope) => void;
  onCancel: () => void;
}) {
  const importing = useImportPresets(labId);
  const [file, setFile] = useState<{ name: string; text: string } | null>(null);
  const [scope, setScope] = useState<Scope>("private");
  const [localError, setLocalError] = useState<string | null>(null);
  const fileInput = useRef<HTMLInputElement>(null);
  const inputId = useId();
  const resultId = useId();

  useEffect(() => fileInput.current?.focus(), []);

  const error = importing.error instanceof ApiError ? importing.error : null;
  const problems = error && Object.keys(error.fields).length > 0 ? error.fields : null;
  const isClash = error?.status === 409 && problems !== null;

  const choose = async (chosen: File | undefined) => {
    importing.reset();
    setLocalError(null);
    setFile(null);
    if (!chosen) return;
    try {
      const text = await chosen.text();
      if (text.length > MAX_FILE_CHARS) {
        setLocalError(`${chosen.name} is larger than ${MAX_FILE_CHARS.toLocaleString("en")} characters; a presets file is usually a few kilobytes.`);
        return;
      }
      setFile({ name: chosen.name, text });
    } catch {
      setLocalError(`${chosen.name} could not be read.`);
    }
  };

  const submit = (onClash: "refuse" | "rename") => {
    if (!file) {
      setLocalError("Choose a presets file first.");
      return;
    }
    importing.mutate(
      { scope, onClash, text: file.text },
      {
        onSuccess: (outcome) => onDone(outcome, scope),
        // The Import button was disabled while busy, which drops the focus: move it to the messages.
        onError: () => requestAnimationFrame(() => document.getElementById(resultId)?.focus()),
      },
    );
  };

  return (
    <PresetPanel title="Import presets" description={<>Choose a presets file (.json) exported from Fluxframe. Every preset in it is added, or none if the file has a problem.</>} onCancel={onCancel}>
      <form
        className="mt-3 flex flex-wrap items-end gap-4"
        onSubmit={(e) => {
          e.preventDefault();
          submit("refuse");
        }}
      >
        <div className="space-y-1">
          <label htmlFor={inputId} className="block text-sm font-medium text-paper-900">
            Presets file
          </label>
          <input
            ref={fileInput}
            id={inputId}
            type="file"
            accept=".json,application/json"
            onChange={(e) => void choose(e.target.files?.[0])}
            className="block text-sm text-paper-900 file:mr-3 file:rounded file:border file:border-paper-300 file:bg-white file:px-3 file:py-1.5 file:text-sm file:font-medium hover:file:bg-paper-100"
          />
        </div>
        <div className="w-56">
          <SelectField label="Add to" value={scope} onChange={(e) => setScope(e.target.value as Scope)}>
            <option value="private">My presets (only me)</option>
            {mayShare && <option value="lab">Lab presets (every member)</option>}
          </SelectField>
        </div>
        <div className="flex gap-2">
          <Button type="submit" busy={importing.isPending} disabled={!file}>
            Import
          </Button>
          <Button type="button" variant="secondary" onClick={onCancel}>
            Cancel
          </Button>
        </div>
      </form>

      <FormError message={localError} />
      {error && !problems && (
        <div id={resultId} tabIndex={-1} className="mt-3">
          <FormError message={error.message} />
        </div>
      )}
      {problems && (
        <div id={resultId} tabIndex={-1} role="alert" className="mt-3 rounded border border-fault-700/30 bg-fault-100 px-3 py-2">
          <p className="text-sm font-medium text-fault-700">{error!.message}</p>
          <ProblemList fields={problems} label={isClash ? "Names already in use" : `Problems in ${file?.name ?? "the file"}`} />
          {isClash && (
            <div className="mt-3 flex flex-wrap items-center gap-3">
              <Button type="button" variant="secondary" busy={importing.isPending} onClick={() => submit("rename")}>
                Import with new names
              </Button>
              <span className="text-xs text-paper-700">Clashing presets are stored as “name (imported)”; existing presets stay as they are.</span>
            </div>
          )}
        </div>
      )}
    </PresetPanel>
  );
}
