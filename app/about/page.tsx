import Link from "next/link";

export const metadata = { title: "About and cautions" };

export default function AboutPage() {
  return (
    <main id="main" className="mx-auto w-full max-w-3xl px-6 py-12">
      <Link href="/" className="mb-8 inline-flex items-center gap-2 font-semibold tracking-tight">
        <span aria-hidden className="inline-block h-4 w-4 rounded-sm bg-flux-600" />
        Fluxframe
      </Link>
      <h1 className="text-2xl font-semibold tracking-tight">About Fluxframe and its cautions</h1>
      <div className="mt-6 space-y-4 text-paper-900">
        <p>
          Fluxframe is a shared workspace for a lab&apos;s 12- and 16-bit fluorescence stacks (channels × z × time). It answers questions
          about the numbers — saturation, clipping at zero, how much of the detector range was used, photoelectrons — and lets you share
          exactly the view you are looking at.
        </p>
        <h2 className="pt-4 text-lg font-semibold">Cautions</h2>
        <ul className="list-disc space-y-2 pl-6">
          <li>
            <strong>Display mappings are not data.</strong> Black and white points, colour tables and gamma change only what the screen
            shows; stored pixels are never changed. Exported figures state their mapping, and non-linear mappings (gamma, log) are
            disclosed. Your journal&apos;s image-integrity rules and your lab&apos;s policy decide what may be published.
          </li>
          <li>
            <strong>Research use only.</strong> Fluxframe is not a medical device and is not for clinical diagnosis.
          </li>
          <li>
            <strong>Human-subject data</strong> stays under your local ethics and privacy rules. Fluxframe does not anonymise images.
          </li>
          <li>
            <strong>Saturated pixels cannot be quantified.</strong> Regions that contain pixels at the detector&apos;s ceiling are flagged.
          </li>
        </ul>
      </div>
    </main>
  );
}
