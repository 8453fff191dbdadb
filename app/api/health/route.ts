import { db } from "@/lib/server/db";
import { errorResponse } from "@/lib/server/errors";

export const dynamic = "force-dynamic";

export async function GET() {
  try {
    await db().sequelize.query("SELECT 1");
    return Response.json({ ok: true });
  } catch (error) {
    return errorResponse(error);
  }
}
