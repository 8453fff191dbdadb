import "server-only";
import { notFound, redirect } from "next/navigation";
import type { Action } from "@/lib/permissions";
import { requireLabAccess, requireUser, type LabAccess, type SessionUser } from "./access";
import { HttpError } from "./errors";

// Page-side counterpart of withLab: the same access decision, answered with a redirect to sign-in
// (401) or the not-found page (404/403) instead of JSON.
export async function labPage(labId: string, action: Action = "lab.read"): Promise<LabAccess> {
  try {
    return await requireLabAccess(labId, action);
  } catch (error) {
    if (error instanceof HttpError && error.status === 401) redirect(`/signin?callbackUrl=${encodeURIComponent(`/labs/${labId}`)}`);
    if (error instanceof HttpError && (error.status === 404 || error.status === 403)) notFound();
    throw error;
  }
}

export async function userPage(returnTo: string): Promise<SessionUser> {
  try {
    return await requireUser();
  } catch (error) {
    if (error instanceof HttpError && error.status === 401) redirect(`/signin?callbackUrl=${encodeURIComponent(returnTo)}`);
    throw error;
  }
}
