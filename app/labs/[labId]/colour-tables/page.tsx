import { ColourTablesPage } from "@/components/colour-tables/colour-tables-page";
import { labPage } from "@/lib/server/pages";

export const metadata = { title: "Colour tables" };

export default async function Page({ params }: { params: Promise<{ labId: string }> }) {
  const { labId } = await params;
  const { lab, role } = await labPage(labId, "presets.read");
  return <ColourTablesPage labId={lab.id} role={role} />;
}
