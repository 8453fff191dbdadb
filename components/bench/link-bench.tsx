"use client";

import { useQuery } from "@tanstack/react-query";
import Link from "next/link";
import { ApiError, api } from "@/lib/client/api";
import type { LinkViewData } from "@/lib/client/links";
import { Bench } from "./bench";

/**
 * The read-only bench behind a view link. Opening counts one visit (GET /api/v/[token]); the
 * snapshot arrives with the dataset's viewing metadata. Sign-in, wrong account, revoked and expired
 * links each get a plain explanation rather than an empty bench.
 */
export function LinkBench({ token }: { token: string }) {
  const opened = useQuery({
    queryKey: ["links", token],
    queryFn: () => api<LinkViewData>(`/api/v/${token}`),
    retry: false,
    staleTime: Infinity,
    refetchOnWindowFocus: false,
  });
  if (opened.isPending) return <p className="text-sm text-paper-700">Opening the shared view…</p>;
  if (opened.isError) {
    const error = opened.error instanceof ApiError ? opened.error : null;
    const callbackUrl = encodeURIComponent(`/v/${token}`);
    return (
      <div className="mx-auto max-w-xl space-y-3 py-10 text-center">
        <h1 className="text-xl font-semibold">
          {error?.status === 401 ? "Sign in to open this view" : error?.status === 410 ? "This link no longer works" : error?.status === 403 ? "This view is not shared with you" : "The view cannot be opened"}
        </h1>
        <p role="alert" className="text-sm text-paper-700">
          {error?.status === 401
            ? "The lab shared this view with its members or with named addresses."
            : (error?.message ?? "Something went wrong while opening the link.")}
        </p>
        {(error?.status === 401 || error?.status === 403) && (
          <Link href={`/signin?callbackUrl=${callbackUrl}`} className="inline-block rounded bg-flux-700 px-3 py-1.5 text-sm text-white">
            {error.status === 401 ? "Sign in" : "Sign in with another account"}
          </Link>
        )}
      </div>
    );
  }
  const { dataset } = opened.data;
  return <Bench labId={dataset.labId} datasetId={dataset.id} link={{ token, data: opened.data }} />;
}
