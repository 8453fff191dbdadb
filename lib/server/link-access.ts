import "server-only";
import type { NextRequest } from "next/server";
import { currentUser, type SessionUser } from "./access";
import { errorResponse } from "./errors";
import { peerAddress } from "./rate-limit";
import { resolveLink, type OpenedLink } from "./view-links";

type Params = Record<string, string | string[] | undefined>;

/**
 * Access to /api/v/[token]/…: the token is the credential (lib/server/view-links.ts resolveLink
 * decides: 404 unknown, 410 revoked or expired, 401/403 for lab-only and address-only links).
 * `open: true` counts a visit and applies the opening rate limits.
 */
export function withLink(
  handler: (request: NextRequest, ctx: OpenedLink & { viewer: SessionUser | null; ip: string }) => Promise<Response>,
  options: { open?: boolean } = {},
) {
  return async (request: NextRequest, context: { params: Promise<Params> }) => {
    try {
      const { token } = await context.params;
      const viewer = await currentUser();
      const ip = peerAddress(request);
      const opened = await resolveLink(String(token ?? ""), viewer, { ip, open: options.open });
      return await handler(request, { ...opened, viewer, ip });
    } catch (error) {
      return errorResponse(error);
    }
  };
}
