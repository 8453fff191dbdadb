import { importColourTableBody } from "@/lib/schemas/colour-table";
import { withLab } from "@/lib/server/access";
import { importColourTable } from "@/lib/server/colour-tables";
import { parseBody } from "@/lib/server/errors";

// Imports a CSV (`index,r,g,b`, 256 rows) or JSON file sent as text in the body. Any problem gives
// one 400 whose fields are keyed by line ("line 12"), and nothing is stored.
export const POST = withLab(
  async (request, { lab, user, role }) => {
    const body = await parseBody(request, importColourTableBody);
    return Response.json({ table: await importColourTable({ userId: user.id, role, labId: lab.id }, body) }, { status: 201 });
  },
  { need: "presets.read" },
);
