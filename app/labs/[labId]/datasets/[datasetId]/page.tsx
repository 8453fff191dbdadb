import { Bench } from "@/components/bench/bench";
import { labPage } from "@/lib/server/pages";

export const metadata = { title: "Bench" };

export default async function BenchPage({ params }: { params: Promise<{ labId: string; datasetId: string }> }) {
  const { labId, datasetId } = await params;
  const { lab } = await labPage(labId, "datasets.read");
  return <Bench labId={lab.id} datasetId={Number(datasetId)} />;
}
