import { idParam } from "@/lib/schemas/lab";
import { withLab } from "@/lib/server/access";
import { clientIp } from "@/lib/server/audit";
import { notFound } from "@/lib/server/errors";
import { revokeInvitation } from "@/lib/server/labs";

export const DELETE = withLab(
  async (request, { user, lab, params }) => {
    const id = idParam.safeParse(params.invitationId);
    if (!id.success) throw notFound("That invitation");
    await revokeInvitation(user, lab.id, id.data, clientIp(request));
    return new Response(null, { status: 204 });
  },
  { need: "members.invite" },
);
