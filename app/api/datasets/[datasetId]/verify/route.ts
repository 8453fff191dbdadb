import { clientIp } from "@/lib/server/audit";
import { withDataset } from "@/lib/server/dataset-access";
import { verifyDataset } from "@/lib/server/datasets";

// Re-hashes the stored original and compares with the SHA-256 recorded at upload.
export const POST = withDataset(
  async (request, { user, dataset }) => Response.json(await verifyDataset(user, dataset, clientIp(request))),
  { need: "datasets.read" },
);
