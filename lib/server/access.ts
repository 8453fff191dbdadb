import "server-only";
import { getServerSession } from "next-auth";
import type { NextRequest } from "next/server";
import { can, type Action, type Role } from "@/lib/permissions";
import { idParam } from "@/lib/schemas/lab";
import type { Lab } from "@/models";
import { authOptions } from "./auth";
import { db } from "./db";
import { errorResponse, forbidden, notFound, unauthenticated } from "./errors";

export interface SessionUser {
  id: number;
  email: string;
  name: string;
  isSiteAdmin: boolean;
}

export interface LabAccess {
  user: SessionUser;
  lab: Lab;
  role: Role;
}

/** The signed-in user, re-read from the database so a deleted account loses access at once. */
export async function currentUser(): Promise<SessionUser | null> {
  const session = await getServerSession(authOptions);
  const id = session?.user?.id;
  if (!id) return null;
  const user = await db().User.findByPk(id);
  if (!user) return null;
  // After a password reset, sessions that signed in earlier no longer count.
  const signedInAt = session.user.signedInAt ?? 0;
  if (user.sessionsValidAfter && signedInAt < user.sessionsValidAfter.getTime()) return null;
  return { id: user.id, email: user.email, name: user.name, isSiteAdmin: Boolean(user.isSiteAdmin) };
}

export async function requireUser(): Promise<SessionUser> {
  const user = await currentUser();
  if (!user) throw unauthenticated();
  return user;
}

/**
 * The one place that decides lab access. Anonymous → 401. Not a member (or no such lab) → 404, so
 * a lab's existence does not leak. A member whose role lacks the action → 403.
 */
export async function requireLabAccess(labIdRaw: unknown, action: Action, signedIn?: SessionUser): Promise<LabAccess> {
  // A caller that has just settled the user passes it in: each lookup decrypts the session cookie
  // and reads the user row again, which is a good part of a small request's cost (npm run load).
  const user = signedIn ?? (await requireUser());
  const parsed = idParam.safeParse(labIdRaw);
  if (!parsed.success) throw notFound("That lab");
  const { Lab, Membership } = db();
  // The membership and its lab in one query.
  const membership = await Membership.findOne({ where: { labId: parsed.data, userId: user.id }, include: [{ model: Lab, as: "lab", required: true }] });
  if (!membership) throw notFound("That lab");
  if (!can(membership.role, action)) throw forbidden();
  const lab = (membership as unknown as { lab: Lab }).lab;
  return { user, lab, role: membership.role };
}

type Params = Record<string, string | string[] | undefined>;
interface RouteContext {
  params: Promise<Params>;
}

export function withUser(
  handler: (request: NextRequest, ctx: { user: SessionUser; params: Params }) => Promise<Response>,
) {
  return async (request: NextRequest, context: RouteContext) => {
    try {
      const user = await requireUser();
      return await handler(request, { user, params: await context.params });
    } catch (error) {
      return errorResponse(error);
    }
  };
}

/** Wraps a handler under /api/labs/[labId]/…: access is settled before the handler body runs. */
export function withLab(
  handler: (request: NextRequest, ctx: LabAccess & { params: Params }) => Promise<Response>,
  options: { need: Action },
) {
  return async (request: NextRequest, context: RouteContext) => {
    try {
      const params = await context.params;
      const access = await requireLabAccess(params.labId, options.need);
      return await handler(request, { ...access, params });
    } catch (error) {
      return errorResponse(error);
    }
  };
}

/** For routes open to anyone (sign-up, password reset, invitation preview): only the error mapping. */
export function withErrors(handler: (request: NextRequest, ctx: { params: Params }) => Promise<Response>) {
  return async (request: NextRequest, context: RouteContext) => {
    try {
      return await handler(request, { params: await context.params });
    } catch (error) {
      return errorResponse(error);
    }
  };
}
