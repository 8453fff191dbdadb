import { createRegionBody } from "@/lib/schemas/region";
import { withDataset } from "@/lib/server/dataset-access";
import { parseBody } from "@/lib/server/errors";
import { createRegion, listRegions } from "@/lib/server/regions";

// Regions of interest of this dataset: every member sees them; editors and owners draw them.
export const GET = withDataset(async (_request, { dataset }) => Response.json({ regions: await listRegions(dataset) }), { need: "datasets.read" });

export const POST = withDataset(
  async (request, { user, dataset }) => {
    const body = await parseBody(request, createRegionBody);
    return Response.json({ region: await createRegion(user, dataset, body) }, { status: 201 });
  },
  { need: "datasets.edit" },
);
