import { withLab } from "@/lib/server/access";
import { cancelUpload, getUpload } from "@/lib/server/uploads";

// Resuming asks which parts the server already holds.
export const GET = withLab(
  async (_request, { user, lab, params }) => Response.json({ upload: await getUpload(lab.id, user.id, String(params.uploadId)) }),
  { need: "datasets.upload" },
);

export const DELETE = withLab(
  async (_request, { user, lab, params }) => {
    await cancelUpload(lab.id, user.id, String(params.uploadId));
    return new Response(null, { status: 204 });
  },
  { need: "datasets.upload" },
);
