import type { ReactNode } from "react";
import { AppHeader } from "@/components/shell/app-header";
import { labPage } from "@/lib/server/pages";

export default async function LabLayout({ children, params }: { children: ReactNode; params: Promise<{ labId: string }> }) {
  const { labId } = await params;
  const { user, lab, role } = await labPage(labId);
  return (
    <>
      <AppHeader user={user} lab={{ id: lab.id, name: lab.name, role }} />
      <main id="main" className="mx-auto w-full max-w-6xl flex-1 px-6 py-8">
        {children}
      </main>
    </>
  );
}
