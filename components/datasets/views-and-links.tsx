"use client";

import Link from "next/link";
import { useDeleteSavedView, useLinks, useRevokeLink, useSavedViews } from "@/lib/client/links";
import { can, type Role } from "@/lib/permissions";
import type { LinkOut } from "@/lib/schemas/view-link";
import { Loading, ErrorState } from "@/components/ui/states";

const when = (iso: string | null) => (iso ? new Date(iso).toLocaleString() : "—");
const accessLabel: Record<LinkOut["access"], string> = { anyone: "anyone with the link", lab: "lab members", emails: "listed addresses" };

/** Named snapshots of this dataset's views, each opening the bench in one click. */
export function SavedViews({ labId, datasetId, role, userId }: { labId: number; datasetId: number; role: Role; userId: number | null }) {
  const views = useSavedViews(datasetId);
  const remove = useDeleteSavedView(datasetId);
  return (
    <section className="rounded-md border border-paper-200 bg-white p-4 text-sm" aria-labelledby="saved-views-title">
      <h2 id="saved-views-title" className="mb-2 font-semibold">
        Saved views
      </h2>
      {views.isPending ? (
        <Loading label="Loading saved views…" />
      ) : views.isError ? (
        <ErrorState error={views.error} retry={() => views.refetch()} />
      ) : views.data.length === 0 ? (
        <p className="text-paper-700">None yet. On the bench, choose Views ▸ “Save current view as…” to name what you see for the lab.</p>
      ) : (
        <ul className="divide-y divide-paper-200">
          {views.data.map((v) => (
            <li key={v.id} className="flex flex-wrap items-center gap-x-3 gap-y-1 py-1.5">
              <Link href={`/labs/${labId}/datasets/${datasetId}?view=${v.id}`} className="font-medium text-flux-700 underline">
                {v.name}
              </Link>
              <span className="num text-paper-700">
                z {v.state.z + 1} · t {v.state.t + 1} · {v.state.channels.filter((c) => c.visible).length} channel(s)
              </span>
              <span className="text-paper-700">{v.owner ?? "former member"}</span>
              {(v.ownerId === userId || can(role, "datasets.edit")) && (
                <button
                  type="button"
                  className="ml-auto text-xs text-fault-700 underline"
                  onClick={() => window.confirm(`Delete the saved view "${v.name}"?`) && remove.mutate(v.id)}
                >
                  Delete
                </button>
              )}
            </li>
          ))}
        </ul>
      )}
    </section>
  );
}

/** The dataset's view links: who made each, options, expiry, opens; revoking works at once. */
export function ViewLinks({ datasetId, role }: { datasetId: number; role: Role }) {
  const links = useLinks(datasetId);
  const revoke = useRevokeLink(datasetId);
  const mayRevoke = can(role, "share.create");
  return (
    <section className="rounded-md border border-paper-200 bg-white p-4 text-sm" aria-labelledby="links-title">
      <h2 id="links-title" className="mb-2 font-semibold">
        View links
      </h2>
      {links.isPending ? (
        <Loading label="Loading links…" />
      ) : links.isError ? (
        <ErrorState error={links.error} retry={() => links.refetch()} />
      ) : links.data.length === 0 ? (
        <p className="text-paper-700">No links yet. “Share…” on the bench makes one for the current view.</p>
      ) : (
        <table className="w-full text-left text-xs">
          <caption className="sr-only">View links of this dataset</caption>
          <thead className="text-paper-700">
            <tr>
              <th scope="col" className="py-1 pr-2">Preview</th>
              <th scope="col" className="pr-2">Made by</th>
              <th scope="col" className="pr-2">Who may open</th>
              <th scope="col" className="pr-2">Expires</th>
              <th scope="col" className="pr-2 text-right">Opens</th>
              <th scope="col" className="pr-2">Last opened</th>
              <th scope="col" className="pr-2">Status</th>
              <th scope="col"><span className="sr-only">Actions</span></th>
            </tr>
          </thead>
          <tbody className="divide-y divide-paper-200">
            {links.data.map((l) => (
              <tr key={l.id} aria-label={`Link ${l.id}`}>
                <td className="py-1.5 pr-2">
                  {/* eslint-disable-next-line @next/next/no-img-element -- a small PNG from our own API */}
                  <img src={`/api/datasets/${datasetId}/links/${l.id}/preview`} alt={`Preview of link ${l.id}`} className="h-10 w-auto rounded bg-graphite-950" />
                </td>
                <td className="pr-2">
                  {l.createdBy ?? "former member"}
                  <div className="num text-paper-500">{when(l.createdAt)}</div>
                </td>
                <td className="pr-2">
                  {accessLabel[l.access]}
                  {l.emails?.length ? <div className="text-paper-500">{l.emails.join(", ")}</div> : null}
                  {l.allowDownload && <div className="text-paper-500">download allowed</div>}
                </td>
                <td className="num pr-2">{l.expiresAt ? when(l.expiresAt) : "never"}</td>
                <td className="num pr-2 text-right">{l.opens}</td>
                <td className="num pr-2">{when(l.lastOpenedAt)}</td>
                <td className="pr-2">
                  <span className={l.status === "active" ? "text-ok-700" : "text-paper-500"}>{l.status}</span>
                </td>
                <td>
                  {mayRevoke && l.status === "active" && (
                    <button
                      type="button"
                      disabled={revoke.isPending}
                      className="text-fault-700 underline disabled:opacity-50"
                      onClick={() => window.confirm("Revoke this link? Anyone opening it afterwards sees that it no longer works.") && revoke.mutate(l.id)}
                    >
                      Revoke
                    </button>
                  )}
                </td>
              </tr>
            ))}
          </tbody>
        </table>
      )}
    </section>
  );
}
