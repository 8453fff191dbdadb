import { importPresetsBody } from "@/lib/schemas/preset-file";
import { withLab } from "@/lib/server/access";
import { parseBody } from "@/lib/server/errors";
import { importPresets } from "@/lib/server/preset-transfer";

// Imports a presets file's text into the caller's private presets (any member) or the lab's (needs
// presets.edit, checked in the service). All or nothing: a bad file answers 400 with one message per
// problem ("Line 12, column 9: …", keyed by JSONPath); a name clash 409 unless onClash is "rename".
export const POST = withLab(
  async (request, { lab, user, role }) => {
    const body = await parseBody(request, importPresetsBody);
    const outcome = await importPresets(lab.id, { userId: user.id, role }, body);
    return Response.json({ imported: outcome.presets, renamed: outcome.renamed }, { status: 201 });
  },
  { need: "presets.read" },
);
