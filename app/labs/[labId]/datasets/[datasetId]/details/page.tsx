import { DatasetDetails } from "@/components/datasets/dataset-details";
import { labPage } from "@/lib/server/pages";

export const metadata = { title: "Dataset" };

export default async function DatasetPage({ params }: { params: Promise<{ labId: string; datasetId: string }> }) {
  const { labId, datasetId } = await params;
  const { lab, user } = await labPage(labId, "datasets.read");
  return <DatasetDetails labId={lab.id} datasetId={Number(datasetId)} userId={user.id} />;
}
