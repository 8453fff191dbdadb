import { redirect } from "next/navigation";

export default async function LabHome({ params }: { params: Promise<{ labId: string }> }) {
  const { labId } = await params;
  redirect(`/labs/${labId}/datasets`);
}
