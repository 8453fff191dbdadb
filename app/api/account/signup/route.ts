import { signUpBody } from "@/lib/schemas/account";
import { withErrors } from "@/lib/server/access";
import { signUp } from "@/lib/server/accounts";
import { clientIp } from "@/lib/server/audit";
import { parseBody } from "@/lib/server/errors";
import { accountRules, hit, peerAddress } from "@/lib/server/rate-limit";

export const POST = withErrors(async (request) => {
  await hit(accountRules.signUpPerAddress(), peerAddress(request), "Too many sign-ups from this address; try again later.");
  const body = await parseBody(request, signUpBody);
  const user = await signUp(body, clientIp(request));
  return Response.json({ user }, { status: 201 });
});
