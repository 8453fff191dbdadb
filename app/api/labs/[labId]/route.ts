import { renameLabBody } from "@/lib/schemas/lab";
import { withLab } from "@/lib/server/access";
import { clientIp } from "@/lib/server/audit";
import { parseBody } from "@/lib/server/errors";
import { renameLab } from "@/lib/server/labs";

export const GET = withLab(
  async (_request, { lab, role }) =>
    Response.json({ lab: { id: lab.id, name: lab.name, role, createdAt: lab.createdAt.toISOString() } }),
  { need: "lab.read" },
);

export const PATCH = withLab(
  async (request, { user, lab, role }) => {
    const { name } = await parseBody(request, renameLabBody);
    return Response.json({ lab: await renameLab(user, lab, role, name, clientIp(request)) });
  },
  { need: "lab.rename" },
);
