import { clientIp } from "@/lib/server/audit";
import { withDataset } from "@/lib/server/dataset-access";
import { restoreFromBin } from "@/lib/server/datasets";

export const POST = withDataset(
  async (request, { user, dataset }) => Response.json({ dataset: await restoreFromBin(user, dataset, clientIp(request)) }),
  { need: "datasets.edit", includeDeleted: true },
);
