import { MembersPanel } from "@/components/labs/members-panel";
import { labPage } from "@/lib/server/pages";

export const metadata = { title: "Members" };

export default async function MembersPage({ params }: { params: Promise<{ labId: string }> }) {
  const { labId } = await params;
  const { lab, role, user } = await labPage(labId, "members.read");
  return <MembersPanel labId={lab.id} role={role} currentUserId={user.id} />;
}
