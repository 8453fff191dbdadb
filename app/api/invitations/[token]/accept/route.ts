import { invitationToken } from "@/lib/schemas/lab";
import { withUser } from "@/lib/server/access";
import { clientIp } from "@/lib/server/audit";
import { notFound } from "@/lib/server/errors";
import { acceptInvitation } from "@/lib/server/labs";

export const POST = withUser(async (request, { user, params }) => {
  const token = invitationToken.safeParse(params.token);
  if (!token.success) throw notFound("That invitation");
  const result = await acceptInvitation(user, token.data, clientIp(request));
  return Response.json(result);
});
