import { createSavedViewBody } from "@/lib/schemas/view-link";
import { withDataset } from "@/lib/server/dataset-access";
import { parseBody } from "@/lib/server/errors";
import { createSavedView, listSavedViews } from "@/lib/server/view-links";

// Named snapshots of views of this dataset, visible to the lab and openable in one click.
export const GET = withDataset(async (_request, { dataset }) => Response.json({ views: await listSavedViews(dataset) }), { need: "datasets.read" });

export const POST = withDataset(
  async (request, { user, role, dataset }) => {
    const body = await parseBody(request, createSavedViewBody);
    return Response.json({ view: await createSavedView({ user, role }, dataset, body) }, { status: 201 });
  },
  { need: "datasets.read" },
);
