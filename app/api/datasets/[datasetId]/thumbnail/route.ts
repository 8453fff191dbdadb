import { Readable } from "node:stream";
import { withDataset } from "@/lib/server/dataset-access";
import { notFound } from "@/lib/server/errors";
import { blobStore } from "@/lib/server/storage";

export const GET = withDataset(
  async (_request, { dataset }) => {
    if (!dataset.thumbnailKey) throw notFound("A thumbnail");
    const stream = await blobStore().get(dataset.thumbnailKey);
    return new Response(Readable.toWeb(Readable.from(stream)) as ReadableStream, {
      headers: { "Content-Type": "image/png", "Cache-Control": "private, max-age=3600" },
    });
  },
  { need: "datasets.read", includeDeleted: true },
);
