import { createPresetBody } from "@/lib/schemas/preset";
import { withLab } from "@/lib/server/access";
import { parseBody } from "@/lib/server/errors";
import { createPreset, listPresets } from "@/lib/server/presets";

// The caller's private presets and the lab's.
export const GET = withLab(
  async (_request, { lab, user, role }) => Response.json({ presets: await listPresets(lab.id, { userId: user.id, role }) }),
  { need: "presets.read" },
);

// Any member may create a private preset; a lab preset needs presets.edit (checked in the service).
export const POST = withLab(
  async (request, { lab, user, role }) => {
    const body = await parseBody(request, createPresetBody);
    return Response.json({ preset: await createPreset(lab.id, { userId: user.id, role }, body) }, { status: 201 });
  },
  { need: "presets.read" },
);
