import { LibraryPage } from "@/components/library/library-page";
import { labPage } from "@/lib/server/pages";

export const metadata = { title: "Datasets" };

export default async function DatasetsPage({ params }: { params: Promise<{ labId: string }> }) {
  const { labId } = await params;
  const { lab, role } = await labPage(labId, "datasets.read");
  return <LibraryPage labId={lab.id} role={role} />;
}
