import { forgotPasswordBody } from "@/lib/schemas/account";
import { withErrors } from "@/lib/server/access";
import { requestPasswordReset } from "@/lib/server/accounts";
import { clientIp } from "@/lib/server/audit";
import { parseBody } from "@/lib/server/errors";

// Answers 202 whether or not the address has an account, so it cannot be used to probe for members.
export const POST = withErrors(async (request) => {
  const { email } = await parseBody(request, forgotPasswordBody);
  await requestPasswordReset(email, clientIp(request));
  return Response.json({ message: "If an account uses this address, a reset link is on its way." }, { status: 202 });
});
