"use client";

import { useState } from "react";
import { Button } from "@/components/ui/button";
import { SelectField, TextField } from "@/components/ui/field";
import { ApiError } from "@/lib/client/api";
import { useImportColourTable } from "@/lib/client/colour-tables";
import type { ColourTableOut, ColourTableScope } from "@/lib/schemas/colour-table";

/** "line 12" → 12, so problems are listed in file order; "file" and field names come first. */
const lineNumber = (key: string) => Number(/^line (\d+)$/.exec(key)?.[1] ?? 0);

/**
 * Import a colour table from a CSV (`index,r,g,b`, 256 rows) or JSON file. The server checks the
 * whole file; any problem is listed with its line number and nothing is imported.
 */
export function ImportForm({ labId, mayShare, onDone, onCancel }: { labId: number; mayShare: boolean; onDone: (table: ColourTableOut) => void; onCancel: () => void }) {
  const importTable = useImportColourTable(labId);
  const [file, setFile] = useState<{ name: string; text: string } | null>(null);
  const [name, setName] = useState("");
  const [scope, setScope] = useState<ColourTableScope>("private");
  const [error, setError] = useState<ApiError | Error | null>(null);
  const format = file && /\.json$/i.test(file.name) ? "json" : "csv";
  const problems = error instanceof ApiError ? Object.entries(error.fields).sort(([a], [b]) => lineNumber(a) - lineNumber(b)) : [];

  return (
    <form
      aria-label="Import a colour table"
      className="mb-8 space-y-3 rounded-md border border-paper-300 bg-white p-5"
      onSubmit={async (e) => {
        e.preventDefault();
        if (!file) return;
        setError(null);
        try {
          onDone(await importTable.mutateAsync({ format, content: file.text, scope, ...(name.trim() ? { name: name.trim() } : {}) }));
        } catch (err) {
          setError(err as Error);
        }
      }}
    >
      <h2 className="text-lg font-semibold text-paper-900">Import a colour table</h2>
      <p className="text-sm text-paper-700">
        CSV: 256 rows <code className="num">index,r,g,b</code> (index 0–255 in order, values 0–255), with or without the header line. JSON: a file exported from
        Fluxframe (format version 1).
      </p>
      <div className="space-y-1">
        <label htmlFor="colour-table-file" className="block text-sm font-medium text-paper-900">
          File
        </label>
        <input
          id="colour-table-file"
          type="file"
          accept=".csv,.json,text/csv,application/json"
          onChange={async (e) => {
            const picked = e.target.files?.[0];
            setError(null);
            if (!picked) return setFile(null);
            setFile({ name: picked.name, text: await picked.text() });
            if (!name.trim()) setName(picked.name.replace(/\.(csv|json)$/i, ""));
          }}
          className="block text-sm"
        />
      </div>
      <TextField label="Name" value={name} maxLength={120} onChange={(e) => setName(e.target.value)} hint={format === "json" ? "Leave empty to use the name in the file." : undefined} />
      <SelectField label="Shared with" value={scope} onChange={(e) => setScope(e.target.value as ColourTableScope)}>
        <option value="private">Only me</option>
        {mayShare && <option value="lab">Everyone in this lab</option>}
        {mayShare && <option value="public">Everyone in any lab (public)</option>}
      </SelectField>
      {error && (
        <div role="alert" className="rounded border border-fault-700/30 bg-fault-100 px-3 py-2 text-sm text-fault-700">
          <p className="font-semibold">{error.message}</p>
          {problems.length > 0 && (
            <ul className="mt-1 list-disc pl-5">
              {problems.map(([where, message]) => (
                <li key={where}>
                  <span className="capitalize">{where}</span>: {message}
                </li>
              ))}
            </ul>
          )}
        </div>
      )}
      <div className="flex gap-2">
        <Button type="submit" disabled={!file} busy={importTable.isPending}>
          Import
        </Button>
        <Button type="button" variant="ghost" onClick={onCancel}>
          Cancel
        </Button>
      </div>
    </form>
  );
}
