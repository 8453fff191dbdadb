import { LabSettings } from "@/components/labs/lab-settings";
import { labPage } from "@/lib/server/pages";

export const metadata = { title: "Settings" };

export default async function SettingsPage({ params }: { params: Promise<{ labId: string }> }) {
  const { labId } = await params;
  const { lab, role, user } = await labPage(labId);
  return <LabSettings labId={lab.id} labName={lab.name} role={role} currentUserId={user.id} />;
}
