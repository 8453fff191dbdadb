import { exportFormat } from "@/lib/schemas/colour-table";
import { withLab } from "@/lib/server/access";
import { colourTableId, exportColourTable } from "@/lib/server/colour-tables";
import { parseWith } from "@/lib/server/errors";

// ?format=csv (default) or json, as a download. CSV: header `index,r,g,b`, 256 rows, "\n" line ends.
export const GET = withLab(
  async (request, { lab, user, role, params }) => {
    const format = parseWith(exportFormat, request.nextUrl.searchParams.get("format") ?? "csv", "The format");
    const file = await exportColourTable(colourTableId(params.colourTableId), { userId: user.id, role, labId: lab.id }, format);
    return new Response(file.body, {
      headers: {
        "Content-Type": file.contentType,
        "Content-Disposition": `attachment; filename="${file.fileName}"`,
        "Cache-Control": "no-store",
      },
    });
  },
  { need: "presets.read" },
);
