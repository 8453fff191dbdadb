import Link from "next/link";

export function SiteFooter() {
  return (
    <footer className="border-t border-paper-200 bg-paper-100 px-6 py-4 text-xs text-paper-700">
      <p>
        Research use only; not for clinical diagnosis. Display mappings are not data: stored pixels are never changed.
        Human-subject data stays under your local ethics and privacy rules.{" "}
        <Link href="/about" className="font-medium text-flux-700 underline">
          About and cautions
        </Link>
      </p>
    </footer>
  );
}
