import { AppHeader } from "@/components/shell/app-header";
import { LabsOverview } from "@/components/labs/labs-overview";
import { userPage } from "@/lib/server/pages";

export const metadata = { title: "Your labs" };

export default async function LabsPage() {
  const user = await userPage("/labs");
  return (
    <>
      <AppHeader user={user} />
      <main id="main" className="mx-auto w-full max-w-4xl px-6 py-8">
        <LabsOverview />
      </main>
    </>
  );
}
