import { withLab } from "@/lib/server/access";
import { HttpError } from "@/lib/server/errors";
import { putPart } from "@/lib/server/uploads";

const MAX_PART = 64 * 1024 * 1024;

// The body is the part's raw bytes (application/octet-stream).
export const PUT = withLab(
  async (request, { user, lab, params }) => {
    const partNumber = Number(params.partNumber);
    const declared = Number(request.headers.get("content-length") ?? 0);
    if (declared > MAX_PART) throw new HttpError(413, "invalid_input", `A part may have at most ${MAX_PART} bytes.`);
    const bytes = Buffer.from(await request.arrayBuffer());
    return Response.json({ upload: await putPart(lab.id, user.id, String(params.uploadId), partNumber, bytes) });
  },
  { need: "datasets.upload" },
);
