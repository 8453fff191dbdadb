"use client";

import { useId, type ReactNode } from "react";

/**
 * The shell of the Presets page's panels (new, rename, import): a titled section that Escape
 * cancels, with an optional line of explanation under the title.
 */
export function PresetPanel({ title, description, onCancel, children }: { title: ReactNode; description?: ReactNode; onCancel: () => void; children: ReactNode }) {
  const headingId = useId();
  return (
    <section
      aria-labelledby={headingId}
      className="rounded-md border border-paper-200 bg-white p-4"
      onKeyDown={(e) => {
        if (e.key === "Escape") onCancel();
      }}
    >
      <h2 id={headingId} className="text-base font-semibold text-paper-900">
        {title}
      </h2>
      {description && <p className="mt-1 max-w-prose text-sm text-paper-700">{description}</p>}
      {children}
    </section>
  );
}
