import { withUser } from "@/lib/server/access";
import { listLabs } from "@/lib/server/labs";

export const GET = withUser(async (_request, { user }) => {
  return Response.json({ user, labs: await listLabs(user.id) });
});
