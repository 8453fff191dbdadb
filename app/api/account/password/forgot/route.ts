import { forgotPasswordBody } from "@/lib/schemas/account";
import { withErrors } from "@/lib/server/access";
import { requestPasswordReset } from "@/lib/server/accounts";
import { clientIp } from "@/lib/server/audit";
import { parseBody } from "@/lib/server/errors";
import { accountRules, hit, peerAddress } from "@/lib/server/rate-limit";

// Answers 202 whether or not the address has an account, so it cannot be used to probe for members.
export const POST = withErrors(async (request) => {
  await hit(accountRules.resetPerAddress(), peerAddress(request), "Too many reset requests from this address; try again later.");
  const { email } = await parseBody(request, forgotPasswordBody);
  // Limited per address whether or not it has an account, so the limit reveals nothing either.
  await hit(accountRules.resetPerAccount(), email, "Too many reset requests for this address; use the last link sent, or try again later.");
  await requestPasswordReset(email, clientIp(request));
  return Response.json({ message: "If an account uses this address, a reset link is on its way." }, { status: 202 });
});
