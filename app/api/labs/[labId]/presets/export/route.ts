import { exportPresetsQuery } from "@/lib/schemas/preset-file";
import { withLab } from "@/lib/server/access";
import { parseWith } from "@/lib/server/errors";
import { exportPresets } from "@/lib/server/preset-transfer";

// A presets file (format in DEVELOPERS.md) of every preset the caller can see, or of ?ids=3,8,12,
// sent as a download. No ids, owners or versions leave the lab: only names and mappings.
export const GET = withLab(
  async (request, { lab, user, role }) => {
    const query = parseWith(exportPresetsQuery, { ids: request.nextUrl.searchParams.get("ids") ?? undefined }, "The list of presets");
    const { text } = await exportPresets(lab.id, { userId: user.id, role }, query.ids);
    const day = new Date().toISOString().slice(0, 10);
    return new Response(text, {
      headers: {
        "Content-Type": "application/json; charset=utf-8",
        "Content-Disposition": `attachment; filename="fluxframe-presets-lab${lab.id}-${day}.json"`,
        "Cache-Control": "no-store",
      },
    });
  },
  { need: "presets.read" },
);
