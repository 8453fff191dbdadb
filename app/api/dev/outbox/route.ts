import { currentUser } from "@/lib/server/access";
import { errorResponse, notFound } from "@/lib/server/errors";
import { outboxOpenTo, readOutbox } from "@/lib/server/outbox";

export async function GET() {
  try {
    if (!outboxOpenTo(await currentUser())) throw notFound("The outbox");
    return Response.json({ messages: readOutbox() });
  } catch (error) {
    return errorResponse(error);
  }
}
