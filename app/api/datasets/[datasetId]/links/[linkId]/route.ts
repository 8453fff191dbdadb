import { idParam } from "@/lib/schemas/lab";
import { clientIp } from "@/lib/server/audit";
import { withDataset } from "@/lib/server/dataset-access";
import { notFound } from "@/lib/server/errors";
import { revokeLink } from "@/lib/server/view-links";

// Revokes a link at once (later opens answer 410); the row stays, so the list shows who revoked it when.
export const DELETE = withDataset(
  async (request, { user, role, dataset, params }) => {
    const id = idParam.safeParse(params.linkId);
    if (!id.success) throw notFound("That link");
    return Response.json({ link: await revokeLink({ user, role }, dataset, id.data, clientIp(request)) });
  },
  { need: "share.create" },
);
