import { resetPasswordBody } from "@/lib/schemas/account";
import { withErrors } from "@/lib/server/access";
import { resetPassword } from "@/lib/server/accounts";
import { clientIp } from "@/lib/server/audit";
import { parseBody } from "@/lib/server/errors";

export const POST = withErrors(async (request) => {
  const { token, password } = await parseBody(request, resetPasswordBody);
  await resetPassword(token, password, clientIp(request));
  return Response.json({ message: "Password changed. Sign in with the new one." });
});
