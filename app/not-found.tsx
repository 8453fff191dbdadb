import Link from "next/link";

export default function NotFound() {
  return (
    <main id="main" className="mx-auto max-w-xl flex-1 px-6 py-20 text-center">
      <h1 className="text-xl font-semibold">Not found</h1>
      <p className="mt-2 text-sm text-paper-700">This page does not exist, or you do not have access to it.</p>
      <Link href="/labs" className="mt-6 inline-block text-flux-700 underline">
        Go to your labs
      </Link>
    </main>
  );
}
