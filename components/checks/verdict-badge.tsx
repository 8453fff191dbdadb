import type { Verdict } from "@/lib/imaging/acquisition-check";

const styles: Record<Verdict, string> = {
  ready: "bg-ok-100 text-ok-700",
  caution: "bg-caution-100 text-caution-700",
  "re-image": "bg-fault-100 text-fault-700",
};
const marks: Record<Verdict, string> = { ready: "✓", caution: "!", "re-image": "✕" };

/** A verdict as a word with a mark, never colour alone (LOOK.md). */
export function VerdictBadge({ verdict, label }: { verdict: Verdict; label?: string }) {
  return (
    <span className={`inline-flex items-center gap-1 rounded px-1.5 py-0.5 text-xs font-semibold ${styles[verdict]}`}>
      <span aria-hidden>{marks[verdict]}</span>
      {label ? `${label}: ` : ""}
      {verdict}
    </span>
  );
}
