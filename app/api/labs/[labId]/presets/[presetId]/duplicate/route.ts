import { idParam } from "@/lib/schemas/lab";
import { withLab } from "@/lib/server/access";
import { notFound } from "@/lib/server/errors";
import { duplicatePreset } from "@/lib/server/presets";

// Copies a preset the caller can see into their own private presets, named "<name> (copy)".
export const POST = withLab(
  async (_request, { lab, user, role, params }) => {
    const id = idParam.safeParse(params.presetId);
    if (!id.success) throw notFound("That preset");
    return Response.json({ preset: await duplicatePreset(lab.id, id.data, { userId: user.id, role }) }, { status: 201 });
  },
  { need: "presets.read" },
);
