import { notFound } from "next/navigation";
import { EmptyState, PageHeader } from "@/components/ui/states";
import { currentUser } from "@/lib/server/access";
import { outboxOpenTo, readOutbox } from "@/lib/server/outbox";

export const metadata = { title: "Outbox (local mail)" };
export const dynamic = "force-dynamic";

// Lists what the local fake SMTP server received, so a person can follow invitation and reset links
// without a real mail server. Open only in development/demo set-ups or to site admins.
export default async function OutboxPage() {
  if (!outboxOpenTo(await currentUser())) notFound();
  const messages = readOutbox();
  return (
    <main id="main" className="mx-auto w-full max-w-4xl px-6 py-8">
      <PageHeader title="Outbox" description="Messages caught by the local fake mail server. Newest first. Nothing here left this machine." />
      {messages.length === 0 ? (
        <EmptyState title="No messages yet">Invite someone or ask for a password reset, then reload this page.</EmptyState>
      ) : (
        <ol className="space-y-4">
          {messages.map((m) => (
            <li key={m.id} className="rounded-md border border-paper-200 bg-white p-4">
              <article aria-label={m.subject}>
                <header className="mb-2 text-sm">
                  <h2 className="font-semibold">{m.subject}</h2>
                  <p className="text-paper-700">
                    To {m.to.join(", ")} · <span className="num">{m.date.slice(0, 19).replace("T", " ")}</span> UTC
                  </p>
                </header>
                <pre className="whitespace-pre-wrap break-words font-sans text-sm">
                  {m.text.split(/(https?:\/\/\S+)/g).map((part, i) =>
                    /^https?:\/\//.test(part) ? (
                      <a key={i} href={part} className="text-flux-700 underline">
                        {part}
                      </a>
                    ) : (
                      part
                    ),
                  )}
                </pre>
              </article>
            </li>
          ))}
        </ol>
      )}
    </main>
  );
}
