import { createLinkBody } from "@/lib/schemas/view-link";
import { clientIp } from "@/lib/server/audit";
import { withDataset } from "@/lib/server/dataset-access";
import { parseBody } from "@/lib/server/errors";
import { createLink, listLinks } from "@/lib/server/view-links";

// The dataset's view links, for the lab: who made each, options, expiry, opens. Tokens are never listed.
export const GET = withDataset(async (_request, { dataset }) => Response.json({ links: await listLinks(dataset) }), { need: "datasets.read" });

// A new link to an immutable snapshot; the plain token is in this response only.
export const POST = withDataset(
  async (request, { user, role, dataset }) => {
    const body = await parseBody(request, createLinkBody);
    return Response.json(await createLink({ user, role }, dataset, body, clientIp(request)), { status: 201 });
  },
  { need: "share.create" },
);
