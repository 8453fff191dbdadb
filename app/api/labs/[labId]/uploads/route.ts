import { createUploadBody } from "@/lib/schemas/dataset";
import { withLab } from "@/lib/server/access";
import { parseBody } from "@/lib/server/errors";
import { createUpload } from "@/lib/server/uploads";

export const POST = withLab(
  async (request, { user, lab }) => {
    const body = await parseBody(request, createUploadBody);
    return Response.json({ upload: await createUpload(user, lab.id, body) }, { status: 201 });
  },
  { need: "datasets.upload" },
);
