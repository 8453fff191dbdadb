import { DetectorsPage } from "@/components/detectors/detectors-page";
import { labPage } from "@/lib/server/pages";

export const metadata = { title: "Detectors" };

export default async function Page({ params }: { params: Promise<{ labId: string }> }) {
  const { labId } = await params;
  const { lab, role } = await labPage(labId, "lab.read");
  return <DetectorsPage labId={lab.id} role={role} />;
}
