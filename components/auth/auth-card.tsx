import Link from "next/link";
import type { ReactNode } from "react";

export function AuthCard({ title, children, footer }: { title: string; children: ReactNode; footer?: ReactNode }) {
  return (
    <main id="main" className="flex flex-1 items-start justify-center px-4 py-16">
      <div className="w-full max-w-sm">
        <Link href="/" className="mb-8 flex items-center gap-2 font-semibold tracking-tight">
          <span aria-hidden className="inline-block h-4 w-4 rounded-sm bg-flux-600" />
          Fluxframe
        </Link>
        <div className="rounded-md border border-paper-200 bg-white p-6">
          <h1 className="mb-4 text-lg font-semibold">{title}</h1>
          {children}
        </div>
        {footer && <div className="mt-4 text-center text-sm text-paper-700">{footer}</div>}
      </div>
    </main>
  );
}
