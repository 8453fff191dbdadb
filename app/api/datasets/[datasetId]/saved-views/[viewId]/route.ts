import { idParam } from "@/lib/schemas/lab";
import { withDataset } from "@/lib/server/dataset-access";
import { notFound } from "@/lib/server/errors";
import { deleteSavedView } from "@/lib/server/view-links";

export const DELETE = withDataset(
  async (_request, { user, role, dataset, params }) => {
    const id = idParam.safeParse(params.viewId);
    if (!id.success) throw notFound("That saved view");
    await deleteSavedView({ user, role }, dataset, id.data);
    return new Response(null, { status: 204 });
  },
  { need: "datasets.read" },
);
