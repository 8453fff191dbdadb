import { withDataset } from "@/lib/server/dataset-access";
import { serveOriginal } from "@/lib/server/serve-original";

// The original file for lab members: whole, or by HTTP Range (lib/server/serve-original.ts).
export const GET = withDataset(async (request, { dataset }) => serveOriginal(request, dataset), { need: "datasets.read" });
