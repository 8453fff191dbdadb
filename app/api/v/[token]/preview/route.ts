import { Readable } from "node:stream";
import { notFound } from "@/lib/server/errors";
import { withLink } from "@/lib/server/link-access";
import { blobStore } from "@/lib/server/storage";

// The small PNG of the snapshot made when the link was created (for chat and e-mail previews).
export const GET = withLink(async (_request, { link }) => {
  if (!link.previewKey) throw notFound("A preview of this link");
  const stream = await blobStore().get(link.previewKey);
  return new Response(Readable.toWeb(Readable.from(stream)) as ReadableStream, {
    headers: { "Content-Type": "image/png", "Cache-Control": "private, max-age=300" },
  });
});
