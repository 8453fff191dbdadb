import Link from "next/link";
import { redirect } from "next/navigation";
import { currentUser } from "@/lib/server/access";

export default async function HomePage() {
  if (await currentUser()) redirect("/labs");
  return (
    <main id="main" className="mx-auto flex max-w-3xl flex-1 flex-col justify-center px-6 py-20">
      <p className="mb-3 flex items-center gap-2 font-semibold tracking-tight">
        <span aria-hidden className="inline-block h-4 w-4 rounded-sm bg-flux-600" />
        Fluxframe
      </p>
      <h1 className="text-3xl font-semibold tracking-tight text-paper-900">Check the numbers behind your fluorescence images.</h1>
      <p className="mt-4 max-w-prose text-paper-700">
        A shared workspace for your lab&apos;s 12- and 16-bit stacks: see whether a channel is saturated or clipped at zero, how much
        of the detector&apos;s range you used, map 65,536 levels to a 256-level screen with named presets, and send a collaborator
        exactly the view you are looking at. The raw counts are never changed.
      </p>
      <div className="mt-8 flex gap-3">
        <Link href="/signin" className="rounded bg-flux-700 px-4 py-2 text-sm font-medium text-white hover:bg-flux-800">
          Sign in
        </Link>
        <Link href="/signup" className="rounded border border-paper-300 bg-white px-4 py-2 text-sm font-medium hover:bg-paper-100">
          Create an account
        </Link>
      </div>
    </main>
  );
}
