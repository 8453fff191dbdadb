import { Readable } from "node:stream";
import { idParam } from "@/lib/schemas/lab";
import { withDataset } from "@/lib/server/dataset-access";
import { notFound } from "@/lib/server/errors";
import { db } from "@/lib/server/db";
import { blobStore } from "@/lib/server/storage";

// A link's preview image for the lab's list on the dataset page (the token is not stored, so the
// list cannot use the guest's address /api/v/[token]/preview).
export const GET = withDataset(
  async (_request, { dataset, params }) => {
    const id = idParam.safeParse(params.linkId);
    const link = id.success ? await db().ViewLink.findOne({ where: { id: id.data, datasetId: dataset.id }, attributes: ["previewKey"] }) : null;
    if (!link?.previewKey) throw notFound("A preview of that link");
    const stream = await blobStore().get(link.previewKey);
    return new Response(Readable.toWeb(Readable.from(stream)) as ReadableStream, {
      headers: { "Content-Type": "image/png", "Cache-Control": "private, max-age=3600" },
    });
  },
  { need: "datasets.read" },
);
