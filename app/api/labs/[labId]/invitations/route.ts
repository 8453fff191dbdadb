import { createInvitationBody } from "@/lib/schemas/lab";
import { withLab } from "@/lib/server/access";
import { clientIp } from "@/lib/server/audit";
import { parseBody } from "@/lib/server/errors";
import { createInvitation, listInvitations } from "@/lib/server/labs";

export const GET = withLab(async (_request, { lab }) => Response.json({ invitations: await listInvitations(lab.id) }), {
  need: "members.invite",
});

export const POST = withLab(
  async (request, { user, lab }) => {
    const body = await parseBody(request, createInvitationBody);
    const invitation = await createInvitation(user, lab, body, clientIp(request));
    return Response.json({ invitation }, { status: 201 });
  },
  { need: "members.invite" },
);
