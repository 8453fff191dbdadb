import { PlannerPage } from "@/components/planner/planner-page";
import { labPage } from "@/lib/server/pages";

export const metadata = { title: "Planner" };

export default async function Page({ params }: { params: Promise<{ labId: string }> }) {
  const { labId } = await params;
  // The planner itself needs no lab data; the compression note reads the lab's datasets.
  const { lab } = await labPage(labId, "datasets.read");
  return <PlannerPage labId={lab.id} />;
}
