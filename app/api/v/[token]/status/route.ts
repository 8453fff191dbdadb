import { withLink } from "@/lib/server/link-access";

// Whether the link opens for this caller, without counting a visit: asked by proxy.ts so that a
// revoked or expired link's page answers 410 (and unknown 404) before any page is rendered.
export const GET = withLink(async () => Response.json({ status: "active" }));
