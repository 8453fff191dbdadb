import { NextResponse, type NextRequest } from "next/server";
import { contentSecurityPolicy, storageOrigins } from "@/lib/csp";

// Every page gets a Content-Security-Policy with a fresh nonce (Next puts the nonce on its own
// scripts when it finds the policy in the request headers). View links: before the page at
// /v/[token] renders, the app is asked whether the link opens, so a revoked or expired link answers
// 410 (unknown 404, too many openings 429) with a friendly page, as HTTP clients and chat previews
// expect; sign-in and membership are left to the page, which explains them.
export const config = {
  matcher: [{ source: "/((?!api/|_next/static|_next/image|favicon.ico).*)", missing: [{ type: "header", key: "next-router-prefetch" }] }],
};

const shown: Record<number, string> = { 404: "missing", 410: "gone", 429: "limited" };

async function linkCheck(request: NextRequest, token: string): Promise<{ status: number; message: string; retryAfter: string | null } | null> {
  const origin = process.env.INTERNAL_APP_URL || request.nextUrl.origin;
  try {
    const answer = await fetch(new URL(`/api/v/${encodeURIComponent(token)}/status`, origin), {
      headers: { cookie: request.headers.get("cookie") ?? "", "x-forwarded-for": request.headers.get("x-forwarded-for") ?? "" },
      cache: "no-store",
    });
    const message = ((await answer.json().catch(() => null)) as { error?: { message?: string } } | null)?.error?.message ?? "";
    return { status: answer.status, message, retryAfter: answer.headers.get("retry-after") };
  } catch {
    // The check itself failed: let the page try, it reports its own errors.
    return null;
  }
}

export async function proxy(request: NextRequest) {
  const nonce = Buffer.from(crypto.randomUUID()).toString("base64");
  const csp = contentSecurityPolicy({
    nonce,
    dev: process.env.NODE_ENV === "development",
    connectExtra: storageOrigins(process.env),
    https: (process.env.NEXTAUTH_URL ?? "").startsWith("https:"),
  });
  const requestHeaders = new Headers(request.headers);
  requestHeaders.set("x-nonce", nonce);
  requestHeaders.set("Content-Security-Policy", csp);

  let response = NextResponse.next({ request: { headers: requestHeaders } });
  const link = /^\/v\/([^/]+)$/.exec(request.nextUrl.pathname);
  if (link) {
    const check = await linkCheck(request, link[1]);
    const reason = check ? shown[check.status] : undefined;
    if (check && reason) {
      const target = new URL("/link-unavailable", request.url);
      target.searchParams.set("reason", reason);
      if (check.message) target.searchParams.set("message", check.message);
      response = NextResponse.rewrite(target, { status: check.status, request: { headers: requestHeaders } });
      if (check.retryAfter) response.headers.set("Retry-After", check.retryAfter);
    }
  }
  response.headers.set("Content-Security-Policy", csp);
  return response;
}
