import { idParam } from "@/lib/schemas/lab";
import { updatePresetBody } from "@/lib/schemas/preset";
import { withLab } from "@/lib/server/access";
import { notFound, parseBody } from "@/lib/server/errors";
import { deletePreset, getPreset, updatePreset } from "@/lib/server/presets";

const presetId = (raw: unknown) => {
  const id = idParam.safeParse(raw);
  if (!id.success) throw notFound("That preset");
  return id.data;
};

export const GET = withLab(
  async (_request, { lab, user, role, params }) =>
    Response.json({ preset: await getPreset(lab.id, presetId(params.presetId), { userId: user.id, role }) }),
  { need: "presets.read" },
);

// Rename or change the mappings. The body names the version it was based on; a stale one gets 409
// with the current preset, so the page can offer to reload.
export const PATCH = withLab(
  async (request, { lab, user, role, params }) => {
    const id = presetId(params.presetId);
    const body = await parseBody(request, updatePresetBody);
    const outcome = await updatePreset(lab.id, id, { userId: user.id, role }, body);
    if (outcome.ok) return Response.json({ preset: outcome.preset });
    return Response.json(
      {
        error: { code: "conflict", message: "Someone else saved this preset since you opened it; reload to see their version." },
        current: outcome.current,
      },
      { status: 409 },
    );
  },
  { need: "presets.read" },
);

export const DELETE = withLab(
  async (_request, { lab, user, role, params }) => {
    await deletePreset(lab.id, presetId(params.presetId), { userId: user.id, role });
    return new Response(null, { status: 204 });
  },
  { need: "presets.read" },
);
