import Link from "next/link";

export const metadata = { title: "Link not available", robots: { index: false } };

const reasons: Record<string, { title: string; text: string }> = {
  gone: { title: "This link no longer works", text: "The view link was revoked or has expired. Ask the person who shared it for a new one." },
  missing: { title: "No such link", text: "Check that the whole address was copied; view links are long." },
  limited: { title: "Too many openings", text: "This address opened links too often in a short time. Wait a minute and try again." },
};

// Shown by proxy.ts in place of /v/[token] with the matching status (410, 404 or 429).
export default async function LinkUnavailable({ searchParams }: { searchParams: Promise<{ reason?: string; message?: string }> }) {
  const { reason, message } = await searchParams;
  const shown = reasons[reason ?? ""] ?? reasons.missing;
  return (
    <main id="main" className="mx-auto max-w-xl flex-1 px-6 py-20 text-center">
      <h1 className="text-xl font-semibold">{shown.title}</h1>
      <p className="mt-2 text-sm text-paper-700">{message && message.length < 200 ? message : shown.text}</p>
      <Link href="/labs" className="mt-6 inline-block text-flux-700 underline">
        Go to Fluxframe
      </Link>
    </main>
  );
}
