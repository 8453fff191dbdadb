import type { ReactNode } from "react";

export function Loading({ label = "Loading…" }: { label?: string }) {
  return (
    <div role="status" className="flex items-center gap-2 py-8 text-sm text-paper-700">
      <span aria-hidden className="h-4 w-4 animate-spin rounded-full border-2 border-flux-600 border-t-transparent" />
      {label}
    </div>
  );
}

export function EmptyState({ title, children, action }: { title: string; children?: ReactNode; action?: ReactNode }) {
  return (
    <div className="rounded-md border border-dashed border-paper-300 bg-white px-6 py-10 text-center">
      <h2 className="text-base font-semibold text-paper-900">{title}</h2>
      {children && <div className="mx-auto mt-2 max-w-prose text-sm text-paper-700">{children}</div>}
      {action && <div className="mt-4">{action}</div>}
    </div>
  );
}

export function ErrorState({ error, retry }: { error: unknown; retry?: () => void }) {
  const message = error instanceof Error ? error.message : "Something went wrong.";
  return (
    <div role="alert" className="rounded-md border border-fault-700/30 bg-fault-100 px-4 py-3 text-sm text-fault-700">
      <span className="font-semibold">Could not load this. </span>
      {message}
      {retry && (
        <button type="button" onClick={retry} className="ml-3 underline">
          Try again
        </button>
      )}
    </div>
  );
}

export function PageHeader({ title, description, action }: { title: string; description?: ReactNode; action?: ReactNode }) {
  return (
    <div className="mb-6 flex flex-wrap items-start justify-between gap-4">
      <div>
        <h1 className="text-xl font-semibold tracking-tight text-paper-900">{title}</h1>
        {description && <p className="mt-1 max-w-prose text-sm text-paper-700">{description}</p>}
      </div>
      {action && <div className="shrink-0">{action}</div>}
    </div>
  );
}
