import { invitationToken } from "@/lib/schemas/lab";
import { withErrors } from "@/lib/server/access";
import { notFound } from "@/lib/server/errors";
import { previewInvitation } from "@/lib/server/labs";

// The token is the secret: anyone holding the link may see which lab and role it offers.
export const GET = withErrors(async (_request, { params }) => {
  const token = invitationToken.safeParse(params.token);
  if (!token.success) throw notFound("That invitation");
  return Response.json({ invitation: await previewInvitation(token.data) });
});
