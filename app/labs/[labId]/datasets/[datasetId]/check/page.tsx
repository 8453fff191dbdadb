import { CheckReport } from "@/components/checks/check-report";
import { labPage } from "@/lib/server/pages";

export const metadata = { title: "Acquisition check" };

export default async function Page({ params }: { params: Promise<{ labId: string; datasetId: string }> }) {
  const { labId, datasetId } = await params;
  const { lab } = await labPage(labId, "datasets.read");
  return <CheckReport labId={lab.id} datasetId={Number(datasetId)} />;
}
