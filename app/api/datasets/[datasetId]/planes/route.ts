import { withDataset } from "@/lib/server/dataset-access";
import { planeIndex } from "@/lib/server/datasets";

// The plane index: c, z, t, the IFD offset that opens each plane directly, and its statistics.
export const GET = withDataset(async (_request, { dataset }) => Response.json({ planes: await planeIndex(dataset.id) }), {
  need: "datasets.read",
});
