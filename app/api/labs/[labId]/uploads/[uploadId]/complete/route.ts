import { completeUploadBody } from "@/lib/schemas/dataset";
import { withLab } from "@/lib/server/access";
import { clientIp } from "@/lib/server/audit";
import { parseBody } from "@/lib/server/errors";
import { completeUpload } from "@/lib/server/uploads";

export const POST = withLab(
  async (request, { user, lab, params }) => {
    const { sha256 } = await parseBody(request, completeUploadBody);
    const result = await completeUpload(user, lab.id, String(params.uploadId), sha256, clientIp(request));
    return Response.json(result, { status: 201 });
  },
  { need: "datasets.upload" },
);
