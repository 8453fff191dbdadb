import { createColourTableBody } from "@/lib/schemas/colour-table";
import { withLab } from "@/lib/server/access";
import { createColourTable, listColourTables } from "@/lib/server/colour-tables";
import { parseBody } from "@/lib/server/errors";

// The lab's shared tables, the caller's private ones, and public tables of every lab.
export const GET = withLab(
  async (_request, { lab, user, role }) => Response.json({ tables: await listColourTables({ userId: user.id, role, labId: lab.id }) }),
  { need: "presets.read" },
);

// Any member may create a private table; lab and public tables need presets.edit (checked in the service).
export const POST = withLab(
  async (request, { lab, user, role }) => {
    const body = await parseBody(request, createColourTableBody);
    return Response.json({ table: await createColourTable({ userId: user.id, role, labId: lab.id }, body) }, { status: 201 });
  },
  { need: "presets.read" },
);
