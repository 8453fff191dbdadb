import { idParam } from "@/lib/schemas/lab";
import { updateRegionBody } from "@/lib/schemas/region";
import { withDataset } from "@/lib/server/dataset-access";
import { notFound, parseBody } from "@/lib/server/errors";
import { deleteRegion, updateRegion } from "@/lib/server/regions";

const regionId = (raw: unknown) => {
  const id = idParam.safeParse(raw);
  if (!id.success) throw notFound("That region");
  return id.data;
};

// Rename, recolour or reshape. The body names the version it was based on; a stale one gets 409 with
// the current region, so the bench can show what someone else saved.
export const PATCH = withDataset(
  async (request, { dataset, params }) => {
    const id = regionId(params.regionId);
    const body = await parseBody(request, updateRegionBody);
    const outcome = await updateRegion(dataset, id, body);
    if (outcome.ok) return Response.json({ region: outcome.region });
    return Response.json(
      { error: { code: "conflict", message: "Someone else changed this region since you loaded it; the bench now shows their version." }, current: outcome.current },
      { status: 409 },
    );
  },
  { need: "datasets.edit" },
);

export const DELETE = withDataset(
  async (_request, { dataset, params }) => {
    await deleteRegion(dataset, regionId(params.regionId));
    return new Response(null, { status: 204 });
  },
  { need: "datasets.edit" },
);
