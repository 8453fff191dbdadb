import { auditQuery } from "@/lib/schemas/lab";
import { withLab } from "@/lib/server/access";
import { parseWith } from "@/lib/server/errors";
import { listAudit } from "@/lib/server/labs";

export const GET = withLab(
  async (request, { lab }) => {
    const query = parseWith(auditQuery, Object.fromEntries(request.nextUrl.searchParams), "The filter");
    return Response.json({ events: await listAudit(lab.id, query.action, query.limit) });
  },
  { need: "audit.read" },
);
