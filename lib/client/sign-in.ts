"use client";

import { getSession, signIn } from "next-auth/react";

export type SignInResult = "ok" | "invalid" | "limited" | "failed";

/**
 * Signs in with next-auth's credentials provider without a page reload. Under `next dev` the first
 * call may race a CSRF cookie and come back with `csrf=true` and no session (PLATFORM.md), so it
 * retries once and confirms the session before reporting success.
 */
export async function signInWithPassword(email: string, password: string): Promise<SignInResult> {
  for (let attempt = 0; attempt < 2; attempt++) {
    const result = await signIn("credentials", { email, password, redirect: false });
    if (result?.error === "CredentialsSignin") return "invalid";
    if (result?.error === "RateLimited" || result?.status === 429) return "limited";
    if (result?.ok && !result.url?.includes("csrf=true")) {
      const session = await getSession();
      if (session?.user) return "ok";
    }
  }
  return "failed";
}

/** Only same-site paths may be used as a place to return to after signing in. */
export function safeReturnPath(value: string | null | undefined, fallback = "/labs"): string {
  return value && value.startsWith("/") && !value.startsWith("//") ? value : fallback;
}
