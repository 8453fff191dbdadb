import "server-only";
import { Readable } from "node:stream";
import type { Dataset } from "@/models";
import { forbidden } from "./errors";
import { parseRange } from "./range";
import { blobStore } from "./storage";

/**
 * The original file, byte for byte, with HTTP Range (RFC 9110 §14) so the bench's worker reads one
 * plane at a time. With the S3 driver the browser is sent to a short-lived presigned URL instead.
 * `wholeFile: false` (a view link without download) serves ranges only: the bench can read planes,
 * but there is no download of the file as such. Ranges can still be put together by a determined
 * guest; the option hides the download, it does not make pixels secret from someone allowed to view.
 */
export async function serveOriginal(request: Request, dataset: Dataset, options: { wholeFile: boolean } = { wholeFile: true }): Promise<Response> {
  const header = request.headers.get("range");
  if (!options.wholeFile && !header) throw forbidden("Downloading the original file is off for this link.");
  const store = blobStore();
  // A presigned URL would hand out the whole file, so a range-only link is served through the app.
  const presigned = options.wholeFile ? await store.presignGet(dataset.blobKey, 300) : null;
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
  const ifRange = request.headers.get("if-range");
  const range = header && (!ifRange || ifRange === etag) ? parseRange(header, size) : null;
  if (range === "unsatisfiable") {
    return new Response(null, { status: 416, headers: { ...common, "Content-Range": `bytes */${size}` } });
  }
  if (!range && !options.wholeFile) throw forbidden("Downloading the original file is off for this link.");
  const stream = await store.get(dataset.blobKey, range ?? undefined);
  const body = Readable.toWeb(Readable.from(stream)) as ReadableStream;
  if (!range) return new Response(body, { status: 200, headers: { ...common, "Content-Length": String(size) } });
  return new Response(body, {
    status: 206,
    headers: { ...common, "Content-Range": `bytes ${range.start}-${range.end}/${size}`, "Content-Length": String(range.end - range.start + 1) },
  });
}
