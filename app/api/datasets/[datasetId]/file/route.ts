import { Readable } from "node:stream";
import { withDataset } from "@/lib/server/dataset-access";
import { blobStore } from "@/lib/server/storage";
import { parseRange } from "@/lib/server/range";

// The original file, byte for byte, with HTTP Range (RFC 9110 §14) so the bench's worker reads one
// plane at a time. With the S3 driver the browser is sent to a short-lived presigned URL instead.
export const GET = withDataset(
  async (request, { dataset }) => {
    const store = blobStore();
    const presigned = await store.presignGet(dataset.blobKey, 300);
    if (presigned) return Response.redirect(presigned, 302);

    const size = dataset.sizeBytes;
    const etag = `"${dataset.sha256}"`;
    const common = {
      "Accept-Ranges": "bytes",
      ETag: etag,
      "Content-Type": "image/tiff",
      "Cache-Control": "private, max-age=0, must-revalidate",
      "Content-Disposition": `attachment; filename="${dataset.originalName.replace(/[^\w. -]/g, "_")}"`,
    };
    if (request.headers.get("if-none-match") === etag) return new Response(null, { status: 304, headers: common });
    const header = request.headers.get("range");
    const ifRange = request.headers.get("if-range");
    const range = header && (!ifRange || ifRange === etag) ? parseRange(header, size) : null;
    if (range === "unsatisfiable") {
      return new Response(null, { status: 416, headers: { ...common, "Content-Range": `bytes */${size}` } });
    }
    const stream = await store.get(dataset.blobKey, range ?? undefined);
    const body = Readable.toWeb(Readable.from(stream)) as ReadableStream;
    if (!range) return new Response(body, { status: 200, headers: { ...common, "Content-Length": String(size) } });
    return new Response(body, {
      status: 206,
      headers: { ...common, "Content-Range": `bytes ${range.start}-${range.end}/${size}`, "Content-Length": String(range.end - range.start + 1) },
    });
  },
  { need: "datasets.read" },
);
