import { viewStateBody } from "@/lib/schemas/preset";
import { withDataset } from "@/lib/server/dataset-access";
import { parseBody } from "@/lib/server/errors";
import { getViewState, saveViewState } from "@/lib/server/presets";

// The caller's own last view of this dataset; never shared, so reading it only needs datasets.read.
export const GET = withDataset(
  async (_request, { user, dataset }) => Response.json({ view: await getViewState(user.id, dataset.id) }),
  { need: "datasets.read" },
);

// Saved by the bench (debounced) as the person moves around; a viewer may save their own view.
export const PUT = withDataset(
  async (request, { user, dataset }) => {
    const body = await parseBody(request, viewStateBody);
    return Response.json({ view: await saveViewState(user.id, dataset, body) });
  },
  { need: "datasets.read" },
);
