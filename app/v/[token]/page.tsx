import type { Metadata } from "next";
import { LinkBench } from "@/components/bench/link-bench";
import { appUrl } from "@/lib/server/mail";

// A view link. proxy.ts has already answered 410 for revoked or expired links and 404 for unknown
// ones; this page shows the read-only bench (or why it cannot be opened for this person).
export async function generateMetadata({ params }: { params: Promise<{ token: string }> }): Promise<Metadata> {
  const { token } = await params;
  const preview = appUrl(`/api/v/${token}/preview`);
  return {
    title: "Shared view",
    // The preview image makes the link recognisable in chat and e-mail (for links anyone may open).
    openGraph: { title: "A shared view on Fluxframe", description: "A display mapping of a microscope stack, read-only.", images: [{ url: preview, width: 320 }] },
    robots: { index: false, follow: false },
    referrer: "no-referrer",
  };
}

export default async function SharedViewPage({ params }: { params: Promise<{ token: string }> }) {
  const { token } = await params;
  return (
    <main id="main" className="mx-auto w-full max-w-6xl flex-1 px-6 py-8">
      <LinkBench token={token} />
    </main>
  );
}
