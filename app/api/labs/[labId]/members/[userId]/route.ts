import { can } from "@/lib/permissions";
import { changeRoleBody, idParam } from "@/lib/schemas/lab";
import { withLab } from "@/lib/server/access";
import { clientIp } from "@/lib/server/audit";
import { forbidden, notFound, parseBody } from "@/lib/server/errors";
import { changeRole, removeMember } from "@/lib/server/labs";

function memberId(raw: unknown): number {
  const parsed = idParam.safeParse(raw);
  if (!parsed.success) throw notFound("That member");
  return parsed.data;
}

export const PATCH = withLab(
  async (request, { user, lab, params }) => {
    const userId = memberId(params.userId);
    const { role } = await parseBody(request, changeRoleBody);
    return Response.json({ member: await changeRole(user, lab.id, userId, role, clientIp(request)) });
  },
  { need: "members.changeRole" },
);

// Owners remove anyone; every member may leave a lab themselves (the last owner cannot).
export const DELETE = withLab(
  async (request, { user, lab, role, params }) => {
    const userId = memberId(params.userId);
    if (userId !== user.id && !can(role, "members.remove")) throw forbidden();
    await removeMember(user, lab.id, userId, clientIp(request));
    return new Response(null, { status: 204 });
  },
  { need: "lab.read" },
);
