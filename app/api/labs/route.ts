import { createLabBody } from "@/lib/schemas/lab";
import { withUser } from "@/lib/server/access";
import { clientIp } from "@/lib/server/audit";
import { parseBody } from "@/lib/server/errors";
import { createLab, listLabs } from "@/lib/server/labs";

export const GET = withUser(async (_request, { user }) => Response.json({ labs: await listLabs(user.id) }));

// Any signed-in person may start a lab; they become its first owner.
export const POST = withUser(async (request, { user }) => {
  const { name } = await parseBody(request, createLabBody);
  const lab = await createLab(user, name, clientIp(request));
  return Response.json({ lab }, { status: 201 });
});
