import { updateColourTableBody } from "@/lib/schemas/colour-table";
import { withLab } from "@/lib/server/access";
import { colourTableId, deleteColourTable, getColourTable, updateColourTable } from "@/lib/server/colour-tables";
import { parseBody } from "@/lib/server/errors";

export const GET = withLab(
  async (_request, { lab, user, role, params }) =>
    Response.json({ table: await getColourTable(colourTableId(params.colourTableId), { userId: user.id, role, labId: lab.id }) }),
  { need: "presets.read" },
);

// Rename, or replace the stops. The body names the version it was based on; a stale one gets 409
// with the current table, so the page can offer to reload.
export const PATCH = withLab(
  async (request, { lab, user, role, params }) => {
    const id = colourTableId(params.colourTableId);
    const body = await parseBody(request, updateColourTableBody);
    const outcome = await updateColourTable(id, { userId: user.id, role, labId: lab.id }, body);
    if (outcome.ok) return Response.json({ table: outcome.table });
    return Response.json(
      {
        error: { code: "conflict", message: "Someone else saved this colour table since you opened it; reload to see their version." },
        current: outcome.current,
      },
      { status: 409 },
    );
  },
  { need: "presets.read" },
);

export const DELETE = withLab(
  async (_request, { lab, user, role, params }) => {
    await deleteColourTable(colourTableId(params.colourTableId), { userId: user.id, role, labId: lab.id });
    return new Response(null, { status: 204 });
  },
  { need: "presets.read" },
);
