import { ChecksPage } from "@/components/checks/checks-page";
import { can } from "@/lib/permissions";
import { labPage } from "@/lib/server/pages";

export const metadata = { title: "Checks" };

export default async function Page({ params }: { params: Promise<{ labId: string }> }) {
  const { labId } = await params;
  const { lab, role } = await labPage(labId, "datasets.read");
  return <ChecksPage labId={lab.id} mayConfigure={can(role, "checks.configure")} />;
}
