"use client";

import Link from "next/link";
import { usePathname, useRouter } from "next/navigation";
import { signOut } from "next-auth/react";
import { useLabs } from "@/lib/client/hooks";
import { roleLabels, type Role } from "@/lib/permissions";

export const labSections = [
  { slug: "datasets", label: "Datasets" },
  { slug: "presets", label: "Presets" },
  { slug: "colour-tables", label: "Colour tables" },
  { slug: "checks", label: "Checks" },
  { slug: "detectors", label: "Detectors" },
  { slug: "planner", label: "Planner" },
  { slug: "members", label: "Members" },
  { slug: "settings", label: "Settings" },
] as const;

interface Props {
  user: { name: string; email: string };
  lab?: { id: number; name: string; role: Role };
}

function LabSwitcher({ lab }: { lab: NonNullable<Props["lab"]> }) {
  const router = useRouter();
  const pathname = usePathname();
  const labs = useLabs();
  const section = pathname.split("/")[3] ?? "datasets";
  return (
    <label className="flex items-center gap-2 text-sm">
      <span className="sr-only">Lab</span>
      <select
        aria-label="Switch lab"
        value={String(lab.id)}
        onChange={(event) => {
          const value = event.target.value;
          router.push(value === "new" ? "/labs" : `/labs/${value}/${section}`);
        }}
        className="max-w-64 truncate rounded border border-paper-300 bg-white px-2 py-1 text-sm font-medium"
      >
        {(labs.data ?? [{ id: lab.id, name: lab.name }]).map((l) => (
          <option key={l.id} value={String(l.id)}>
            {l.name}
          </option>
        ))}
        <option value="new">All labs / new lab…</option>
      </select>
      <span className="rounded bg-paper-200 px-1.5 py-0.5 text-xs text-paper-700">{roleLabels[lab.role]}</span>
    </label>
  );
}

export function AppHeader({ user, lab }: Props) {
  const pathname = usePathname();
  return (
    <header className="border-b border-paper-200 bg-white">
      <div className="flex flex-wrap items-center gap-4 px-6 py-3">
        <Link href="/labs" className="flex items-center gap-2 font-semibold tracking-tight text-paper-900">
          <span aria-hidden className="inline-block h-4 w-4 rounded-sm bg-flux-600" />
          Fluxframe
        </Link>
        {lab && <LabSwitcher lab={lab} />}
        <div className="ml-auto">
          <details className="relative">
            <summary className="cursor-pointer list-none rounded px-2 py-1 text-sm text-paper-900 hover:bg-paper-100">
              {user.name} <span aria-hidden>▾</span>
            </summary>
            <div className="absolute right-0 z-20 mt-1 w-60 rounded border border-paper-200 bg-white p-1 text-sm shadow-sm">
              <p className="truncate px-2 py-1.5 text-xs text-paper-700">{user.email}</p>
              <Link href="/labs" className="block rounded px-2 py-1.5 hover:bg-paper-100">
                Your labs
              </Link>
              <Link href="/about" className="block rounded px-2 py-1.5 hover:bg-paper-100">
                About and cautions
              </Link>
              <button
                type="button"
                onClick={() => signOut({ callbackUrl: "/signin" })}
                className="block w-full rounded px-2 py-1.5 text-left hover:bg-paper-100"
              >
                Sign out
              </button>
            </div>
          </details>
        </div>
      </div>
      {lab && (
        <nav aria-label="Lab sections" className="flex gap-1 overflow-x-auto px-4">
          {labSections.map((s) => {
            const href = `/labs/${lab.id}/${s.slug}`;
            const active = pathname.startsWith(href);
            return (
              <Link
                key={s.slug}
                href={href}
                aria-current={active ? "page" : undefined}
                className={`whitespace-nowrap border-b-2 px-3 py-2 text-sm ${
                  active ? "border-flux-600 font-medium text-paper-900" : "border-transparent text-paper-700 hover:text-paper-900"
                }`}
              >
                {s.label}
              </Link>
            );
          })}
        </nav>
      )}
    </header>
  );
}
