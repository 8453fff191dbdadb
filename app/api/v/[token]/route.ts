import { withLink } from "@/lib/server/link-access";
import { linkView } from "@/lib/server/view-links";

// Opening a view link: the snapshot and what the read-only bench needs. Counts one open (rate limited).
export const GET = withLink(async (_request, opened) => Response.json(await linkView(opened, opened.viewer)), { open: true });
