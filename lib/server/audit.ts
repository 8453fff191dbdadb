import "server-only";
import type { Transaction } from "sequelize";
import { db } from "./db";

export type AuditAction =
  | "user.signed_up"
  | "user.signed_in"
  | "user.sign_in_failed"
  | "user.sign_in_paused"
  | "user.password_reset_requested"
  | "user.password_reset"
  | "lab.created"
  | "lab.renamed"
  | "invitation.created"
  | "invitation.accepted"
  | "invitation.revoked"
  | "member.role_changed"
  | "member.removed"
  | "dataset.uploaded"
  | "dataset.edited"
  | "dataset.deleted"
  | "dataset.restored"
  | "dataset.purged"
  | "dataset.verified"
  | "link.created"
  | "link.opened"
  | "link.revoked"
  | "colour_table.created"
  | "colour_table.deleted"
  | "detector_profile.created"
  | "detector_profile.deleted"
  | "lab.check_thresholds_changed";

export interface AuditEntry {
  action: AuditAction;
  labId?: number | null;
  actorId?: number | null;
  target?: string | null;
  ip?: string | null;
  detail?: Record<string, unknown> | null;
}

export async function audit(entry: AuditEntry, transaction?: Transaction): Promise<void> {
  const { AuditEvent } = db();
  await AuditEvent.create(
    {
      action: entry.action,
      labId: entry.labId ?? null,
      actorId: entry.actorId ?? null,
      target: entry.target?.slice(0, 255) ?? null,
      ip: entry.ip?.slice(0, 64) ?? null,
      detail: entry.detail ?? null,
    },
    { transaction },
  );
}

export function clientIp(request: Request): string | null {
  const forwarded = request.headers.get("x-forwarded-for");
  return forwarded?.split(",")[0]?.trim() || request.headers.get("x-real-ip") || null;
}
