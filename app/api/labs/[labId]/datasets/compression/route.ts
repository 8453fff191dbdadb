import { withLab } from "@/lib/server/access";
import { compressionByCodec } from "@/lib/server/compression";

// Lossless compression achieved on the lab's own datasets, per codec, for the Planner's estimate.
export const GET = withLab(async (_request, { lab }) => Response.json(await compressionByCodec(lab.id)), { need: "datasets.read" });
