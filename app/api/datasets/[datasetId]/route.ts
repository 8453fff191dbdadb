import { updateDatasetBody } from "@/lib/schemas/dataset";
import { clientIp } from "@/lib/server/audit";
import { withDataset } from "@/lib/server/dataset-access";
import { channelStats, datasetOut, moveToBin, updateDataset } from "@/lib/server/datasets";
import { parseBody } from "@/lib/server/errors";

export const GET = withDataset(
  async (_request, { dataset, role }) =>
    Response.json({ dataset: datasetOut(dataset), channelStats: await channelStats(dataset.id), role }),
  { need: "datasets.read", includeDeleted: true },
);

export const PATCH = withDataset(
  async (request, { user, dataset }) => {
    const body = await parseBody(request, updateDatasetBody);
    return Response.json({ dataset: await updateDataset(user, dataset, body, clientIp(request)) });
  },
  { need: "datasets.edit" },
);

// Moves the dataset to the bin; the clean-up removes it after the bin period.
export const DELETE = withDataset(
  async (request, { user, dataset }) => Response.json({ dataset: await moveToBin(user, dataset, clientIp(request)) }),
  { need: "datasets.edit" },
);
