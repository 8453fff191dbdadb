import { withLink } from "@/lib/server/link-access";
import { serveOriginal } from "@/lib/server/serve-original";

// Pixel reads for the link's bench by HTTP Range; the whole file only when the link allows download.
export const GET = withLink(async (request, { link, dataset }) => serveOriginal(request, dataset, { wholeFile: Boolean(link.allowDownload) }));
