import { PresetsPage } from "@/components/presets/presets-page";
import { labPage } from "@/lib/server/pages";

export const metadata = { title: "Presets" };

export default async function Page({ params }: { params: Promise<{ labId: string }> }) {
  const { labId } = await params;
  const { lab, role, user } = await labPage(labId, "presets.read");
  return <PresetsPage labId={lab.id} role={role} userId={user.id} />;
}
