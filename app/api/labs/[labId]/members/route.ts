import { withLab } from "@/lib/server/access";
import { listMembers } from "@/lib/server/labs";

export const GET = withLab(async (_request, { lab }) => Response.json({ members: await listMembers(lab.id) }), {
  need: "members.read",
});
