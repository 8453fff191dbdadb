import { planeIndex } from "@/lib/server/datasets";
import { withLink } from "@/lib/server/link-access";

// The plane index for the link's read-only bench (IFD offsets to open any plane directly).
export const GET = withLink(async (_request, { dataset }) => Response.json({ planes: await planeIndex(dataset.id) }));
