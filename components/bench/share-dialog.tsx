"use client";

import Link from "next/link";
import { useEffect, useRef, useState } from "react";
import { ApiError, api } from "@/lib/client/api";
import { useCreateLink, useCreateSavedView, useSavedViews, type CreatedLink } from "@/lib/client/links";
import type { ViewStateBody } from "@/lib/schemas/preset";
import type { SavedViewOut } from "@/lib/schemas/view-link";
import { DEFAULT_LINK_DAYS, MAX_LINK_DAYS, type LinkAccessChoice } from "@/lib/schemas/view-link";

const field = "rounded border border-graphite-600 bg-graphite-950 px-2 py-1 text-sm text-graphite-100";

/** Splits a typed list of addresses on commas, semicolons, spaces and new lines. */
export function splitAddresses(text: string): string[] {
  return text
    .split(/[\s,;]+/)
    .map((s) => s.trim())
    .filter(Boolean);
}

/**
 * "Share": makes a link to an immutable snapshot of the current view, with who may open it, expiry
 * and download options, and optionally e-mails it. The link's address is shown once, here.
 */
export function ShareDialog({ datasetId, view, onClose }: { datasetId: number; view: ViewStateBody; onClose: () => void }) {
  const create = useCreateLink(datasetId);
  const [access, setAccess] = useState<LinkAccessChoice>("lab");
  const [emails, setEmails] = useState("");
  const [never, setNever] = useState(false);
  const [days, setDays] = useState(DEFAULT_LINK_DAYS);
  const [allowDownload, setAllowDownload] = useState(false);
  const [sendTo, setSendTo] = useState("");
  const [note, setNote] = useState("");
  const [created, setCreated] = useState<CreatedLink | null>(null);
  const [copied, setCopied] = useState(false);
  // The snapshot is taken when the dialog opens: later changes on the bench do not alter it.
  const [snapshot] = useState(view);
  const first = useRef<HTMLSelectElement>(null);
  useEffect(() => first.current?.focus(), []);

  const error = create.error instanceof ApiError ? create.error : null;
  const submit = (e: React.FormEvent) => {
    e.preventDefault();
    create.mutate(
      {
        state: snapshot,
        access,
        ...(access === "emails" ? { emails: splitAddresses(emails) } : {}),
        expiresInDays: never && access === "lab" ? null : days,
        allowDownload,
        ...(splitAddresses(sendTo).length ? { sendTo: splitAddresses(sendTo) } : {}),
        ...(note.trim() ? { note: note.trim() } : {}),
      },
      { onSuccess: setCreated },
    );
  };

  return (
    <div
      role="dialog"
      aria-modal="true"
      aria-labelledby="share-title"
      className="fixed inset-0 z-50 grid place-items-center bg-black/60"
      onClick={onClose}
      onKeyDown={(e) => {
        e.stopPropagation();
        if (e.key === "Escape") onClose();
      }}
    >
      <div className="w-[30rem] max-w-[95vw] rounded border border-graphite-600 bg-graphite-900 p-4 text-sm text-graphite-100" onClick={(e) => e.stopPropagation()}>
        <h2 id="share-title" className="mb-1 font-semibold text-white">
          Share this view
        </h2>
        <p className="mb-3 text-xs text-graphite-300">
          The link opens this exact view (plane z {snapshot.z + 1}, t {snapshot.t + 1}, the current black and white points) read-only. Later changes on your bench do not change it.
        </p>
        {created ? (
          <div className="space-y-3">
            <label className="block text-xs text-graphite-200">
              Link
              <input readOnly value={created.url} aria-label="Link address" className={`${field} num mt-1 w-full`} onFocus={(e) => e.currentTarget.select()} />
            </label>
            <div className="flex items-center gap-2">
              <button
                type="button"
                className="rounded bg-flux-600 px-3 py-1 text-white hover:bg-flux-500"
                onClick={() => void navigator.clipboard?.writeText(created.url).then(() => setCopied(true), () => setCopied(false))}
              >
                Copy link
              </button>
              {copied && <span role="status">Copied.</span>}
            </div>
            {created.sent.length > 0 && <p role="status">E-mailed to {created.sent.join(", ")}.</p>}
            {created.failed.length > 0 && <p role="alert" className="text-[#ffd180]">Could not e-mail {created.failed.join(", ")}; copy the link instead.</p>}
            <p className="text-xs text-graphite-300">
              {created.link.expiresAt ? `Works until ${new Date(created.link.expiresAt).toLocaleString()}.` : "Does not expire."} This address is shown only now; the dataset page lists the link and can revoke it.
            </p>
            <button type="button" onClick={onClose} className="rounded border border-graphite-600 px-3 py-1">
              Done
            </button>
          </div>
        ) : (
          <form onSubmit={submit} className="space-y-3" noValidate>
            <label className="block text-xs text-graphite-200">
              Who may open it
              <select ref={first} value={access} onChange={(e) => setAccess(e.target.value as LinkAccessChoice)} className={`${field} mt-1 w-full`}>
                <option value="lab">Members of this lab (after signing in)</option>
                <option value="emails">Listed e-mail addresses (after signing in)</option>
                <option value="anyone">Anyone with the link</option>
              </select>
            </label>
            {access === "emails" && (
              <label className="block text-xs text-graphite-200">
                Addresses that may open it
                <textarea value={emails} onChange={(e) => setEmails(e.target.value)} rows={2} className={`${field} mt-1 w-full`} aria-invalid={Boolean(error?.fields.emails)} />
                {error?.fields.emails && <span className="text-[#ffd180]">{error.fields.emails}</span>}
              </label>
            )}
            <div className="flex flex-wrap items-center gap-2 text-xs text-graphite-200">
              <label className="flex items-center gap-1">
                Expires after
                <input
                  type="number"
                  min={1}
                  max={MAX_LINK_DAYS}
                  value={days}
                  disabled={never && access === "lab"}
                  onChange={(e) => setDays(Math.min(MAX_LINK_DAYS, Math.max(1, e.target.valueAsNumber || 1)))}
                  className={`${field} num w-20 text-right`}
                  aria-label="Days until the link expires"
                />
                days
              </label>
              {access === "lab" && (
                <label className="flex items-center gap-1">
                  <input type="checkbox" checked={never} onChange={(e) => setNever(e.target.checked)} className="accent-flux-500" />
                  never (lab members only)
                </label>
              )}
              {error?.fields.expiresInDays && <span className="text-[#ffd180]">{error.fields.expiresInDays}</span>}
            </div>
            <label className="flex items-center gap-2 text-xs text-graphite-200">
              <input type="checkbox" checked={allowDownload} onChange={(e) => setAllowDownload(e.target.checked)} className="accent-flux-500" />
              Allow downloading the original file
            </label>
            <label className="block text-xs text-graphite-200">
              E-mail the link to (optional)
              <input value={sendTo} onChange={(e) => setSendTo(e.target.value)} placeholder="name@example.org, …" className={`${field} mt-1 w-full`} />
              {Object.entries(error?.fields ?? {})
                .filter(([k]) => k.startsWith("sendTo"))
                .map(([k, m]) => (
                  <span key={k} className="block text-[#ffd180]">
                    {m}
                  </span>
                ))}
            </label>
            {splitAddresses(sendTo).length > 0 && (
              <label className="block text-xs text-graphite-200">
                Note in the e-mail (optional)
                <textarea value={note} onChange={(e) => setNote(e.target.value)} rows={2} maxLength={500} className={`${field} mt-1 w-full`} />
              </label>
            )}
            {error && !Object.keys(error.fields).length && (
              <p role="alert" className="text-[#ffd180]">
                {error.message}
              </p>
            )}
            <div className="flex gap-2">
              <button type="submit" disabled={create.isPending} className="rounded bg-flux-600 px-3 py-1 text-white hover:bg-flux-500 disabled:opacity-50">
                {create.isPending ? "Making the link…" : "Create link"}
              </button>
              <button type="button" onClick={onClose} className="rounded border border-graphite-600 px-3 py-1">
                Cancel
              </button>
            </div>
          </form>
        )}
      </div>
    </div>
  );
}

/** Names the current view for the lab ("Save view as…") and lists the dataset's saved views. */
export function SavedViewsMenu({ datasetId, view, onOpen }: { datasetId: number; view: ViewStateBody; onOpen: (view: SavedViewOut) => void }) {
  const views = useSavedViews(datasetId);
  const create = useCreateSavedView(datasetId);
  const [note, setNote] = useState<string | null>(null);
  return (
    <span className="flex items-center gap-1 text-xs text-graphite-200">
      <label className="flex items-center gap-1">
        Views
        <select
          aria-label="Saved views"
          value=""
          onChange={(e) => {
            const v = e.target.value;
            if (v === "save") {
              const name = window.prompt("Name of the saved view (the lab sees it on the dataset page)");
              if (!name?.trim()) return;
              create.mutate(
                { name: name.trim(), state: view },
                { onSuccess: (saved) => setNote(`Saved view "${saved.name}".`), onError: (err) => setNote(err instanceof ApiError ? (err.fields.name ?? err.message) : String(err)) },
              );
            } else if (v) {
              const chosen = views.data?.find((x) => String(x.id) === v);
              if (chosen) onOpen(chosen);
            }
          }}
          className="max-w-40 rounded border border-graphite-600 bg-graphite-900 px-1 py-0.5 text-xs"
        >
          <option value="">{views.isPending ? "loading…" : "open…"}</option>
          {views.data?.map((v) => (
            <option key={v.id} value={v.id}>
              {v.name}
            </option>
          ))}
          <option value="save">Save current view as…</option>
        </select>
      </label>
      {note && (
        <span role="status" className="text-graphite-200">
          {note}
        </span>
      )}
    </span>
  );
}

/** On a link's bench, a signed-in lab member can keep what they see as their own view of the dataset. */
export function SaveAsMineButton({ datasetId, view }: { datasetId: number; view: ViewStateBody }) {
  const [state, setState] = useState<"idle" | "saving" | "saved" | "failed">("idle");
  const [labId, setLabId] = useState<number | null>(null);
  return (
    <span className="flex items-center gap-2 text-xs">
      <button
        type="button"
        disabled={state === "saving"}
        className="rounded bg-flux-600 px-2 py-0.5 font-medium text-white hover:bg-flux-500 disabled:opacity-50"
        onClick={() => {
          setState("saving");
          api<{ view: unknown }>(`/api/datasets/${datasetId}/view`, { method: "PUT", body: view })
            .then(() => api<{ dataset: { labId: number } }>(`/api/datasets/${datasetId}`))
            .then(({ dataset }) => {
              setLabId(dataset.labId);
              setState("saved");
            })
            .catch(() => setState("failed"));
        }}
      >
        Save as my view
      </button>
      {state === "saved" && labId !== null && (
        <span role="status" className="text-graphite-200">
          Saved.{" "}
          <Link href={`/labs/${labId}/datasets/${datasetId}`} className="underline">
            Open on your bench
          </Link>
        </span>
      )}
      {state === "failed" && (
        <span role="alert" className="text-[#ffd180]">
          Not saved; try again.
        </span>
      )}
    </span>
  );
}
