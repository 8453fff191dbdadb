import { z } from "zod";
import { email } from "./account";
import { roles } from "@/lib/permissions";

export const labName = z.string().trim().min(2, "Use at least 2 characters.").max(120, "At most 120 characters.");

export const createLabBody = z.object({ name: labName });
export const renameLabBody = z.object({ name: labName });

/**
 * Route ids are positive integers written plainly ("12", not "0x0c", "12.0" or " 12"); anything else
 * is a 404, not a 500. Numbers are accepted as they are (ids taken from rows).
 */
export const idParam = z
  .union([z.number(), z.string().regex(/^[1-9][0-9]{0,9}$/).transform(Number)])
  .pipe(z.number().int().positive().max(2 ** 32 - 1));

export const role = z.enum(roles, { message: "Choose owner, editor or viewer." });

export const LabOut = z.object({
  id: z.number(),
  name: z.string(),
  role: role,
  memberCount: z.number().optional(),
  createdAt: z.string(),
});
export type LabOut = z.infer<typeof LabOut>;

export const MemberOut = z.object({
  userId: z.number(),
  name: z.string(),
  email: z.string(),
  role: role,
  joinedAt: z.string(),
});
export type MemberOut = z.infer<typeof MemberOut>;

export const changeRoleBody = z.object({ role });

export const createInvitationBody = z.object({ email, role });
export type CreateInvitationBody = z.infer<typeof createInvitationBody>;

export const InvitationOut = z.object({
  id: z.number(),
  email: z.string(),
  role: role,
  status: z.enum(["pending", "accepted", "expired", "revoked"]),
  invitedBy: z.string().nullable(),
  expiresAt: z.string(),
  createdAt: z.string(),
});
export type InvitationOut = z.infer<typeof InvitationOut>;

export const InvitationPreviewOut = z.object({
  labName: z.string(),
  email: z.string(),
  role: role,
  status: z.enum(["pending", "accepted", "expired", "revoked"]),
  expiresAt: z.string(),
});
export type InvitationPreviewOut = z.infer<typeof InvitationPreviewOut>;

export const AuditEventOut = z.object({
  id: z.number(),
  action: z.string(),
  actor: z.string().nullable(),
  target: z.string().nullable(),
  ip: z.string().nullable(),
  createdAt: z.string(),
});
export type AuditEventOut = z.infer<typeof AuditEventOut>;

export const auditQuery = z.object({
  action: z.string().max(64).optional(),
  limit: z.coerce.number().int().min(1).max(500).default(100),
});

/** The random part of an invitation link (base64url). */
export const invitationToken = z.string().regex(/^[A-Za-z0-9_-]{20,100}$/);
