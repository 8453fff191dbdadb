import NextAuth from "next-auth";
import type { NextRequest } from "next/server";
import { audit } from "@/lib/server/audit";
import { authOptions } from "@/lib/server/auth";
import { db } from "@/lib/server/db";
import { errorResponse } from "@/lib/server/errors";
import { appUrl, sendMail } from "@/lib/server/mail";
import { accountRules, hit, peerAddress, RateLimitedError } from "@/lib/server/rate-limit";

const handler = NextAuth(authOptions);

/** Tells the account's owner once per window that sign-in was paused, and what to do if it was not them. */
async function lockOutNotice(email: string, ip: string): Promise<void> {
  const user = await db().User.findOne({ where: { email } });
  if (!user) return;
  await audit({ action: "user.sign_in_paused", actorId: user.id, target: email, ip });
  await sendMail({
    to: user.email,
    subject: "Sign-in to your Fluxframe account was paused",
    text:
      `Hello ${user.name},\n\nThere were too many sign-in attempts for your account (the last from ${ip}), so signing in is paused for ` +
      `${Math.round(accountRules.signInPerAccount().windowSeconds / 60)} minutes.\n\nIf that was you, wait and try again. If it was not, ` +
      `choose a new password: ${appUrl("/forgot-password")}`,
  });
}

/**
 * Password sign-ins are rate limited per address and per account before next-auth sees them: past
 * the limit the answer is 429 with Retry-After, and a `url` carrying `error=RateLimited`, which is
 * what next-auth's client reads to report an error.
 */
async function POST(request: NextRequest, context: { params: Promise<{ nextauth: string[] }> }) {
  const { nextauth } = await context.params;
  if (nextauth.join("/") === "callback/credentials") {
    const ip = peerAddress(request);
    const form = await request.clone().formData().catch(() => null);
    const email = String(form?.get("email") ?? "").trim().toLowerCase();
    try {
      await hit(accountRules.signInPerAddress(), ip, "Too many sign-in attempts from this address; wait a few minutes and try again.");
      if (email) {
        await hit(accountRules.signInPerAccount(), email, "Too many sign-in attempts for this account; wait a few minutes and try again.", () => lockOutNotice(email, ip));
      }
    } catch (error) {
      if (!(error instanceof RateLimitedError)) return errorResponse(error);
      const retry = String(error.retryAfterSeconds);
      return Response.json(
        { error: { code: error.code, message: error.message }, url: appUrl(`/signin?error=RateLimited&retryAfter=${retry}`) },
        { status: 429, headers: { "Retry-After": retry } },
      );
    }
  }
  return handler(request, context);
}

export { handler as GET, POST };
