import "server-only";
import { Op, type Transaction } from "sequelize";
import type { Role } from "@/lib/permissions";
import type { AuditEventOut, CreateInvitationBody, InvitationOut, InvitationPreviewOut, LabOut, MemberOut } from "@/lib/schemas/lab";
import type { Invitation, Lab } from "@/models";
import { audit } from "./audit";
import { db } from "./db";
import { conflict, forbidden, gone, notFound } from "./errors";
import { appUrl, sendMail } from "./mail";
import { hashToken, newToken } from "./tokens";

export const INVITATION_DAYS = 7;

export interface Actor {
  id: number;
  name: string;
  email: string;
}

function labOut(lab: Lab, role: Role, memberCount?: number): LabOut {
  return { id: lab.id, name: lab.name, role, memberCount, createdAt: lab.createdAt.toISOString() };
}

export async function listLabs(userId: number): Promise<LabOut[]> {
  const { Membership, Lab, sequelize } = db();
  const memberships = await Membership.findAll({
    where: { userId },
    include: [{ model: Lab, as: "lab" }],
    order: [[{ model: Lab, as: "lab" }, "name", "ASC"]],
  });
  const labIds = memberships.map((m) => m.labId);
  const counts = labIds.length
    ? ((await Membership.findAll({
        attributes: ["labId", [sequelize.fn("COUNT", sequelize.col("id")), "count"]],
        where: { labId: labIds },
        group: ["labId"],
        raw: true,
      })) as unknown as { labId: number; count: number }[])
    : [];
  const countOf = new Map(counts.map((c) => [c.labId, Number(c.count)]));
  return memberships.map((m) => labOut(m.lab!, m.role, countOf.get(m.labId) ?? 1));
}

export async function createLab(actor: Actor, name: string, ip: string | null): Promise<LabOut> {
  const { Lab, Membership, sequelize } = db();
  return sequelize.transaction(async (transaction) => {
    const lab = await Lab.create({ name, createdById: actor.id }, { transaction });
    await Membership.create({ labId: lab.id, userId: actor.id, role: "owner" }, { transaction });
    await audit({ action: "lab.created", labId: lab.id, actorId: actor.id, target: name, ip }, transaction);
    return labOut(lab, "owner", 1);
  });
}

export async function renameLab(actor: Actor, lab: Lab, role: Role, name: string, ip: string | null): Promise<LabOut> {
  const { sequelize } = db();
  return sequelize.transaction(async (transaction) => {
    const before = lab.name;
    await lab.update({ name }, { transaction });
    await audit({ action: "lab.renamed", labId: lab.id, actorId: actor.id, target: name, ip, detail: { from: before } }, transaction);
    return labOut(lab, role);
  });
}

export async function listMembers(labId: number): Promise<MemberOut[]> {
  const { Membership, User } = db();
  const rows = await Membership.findAll({
    where: { labId },
    include: [{ model: User, as: "user" }],
    order: [[{ model: User, as: "user" }, "name", "ASC"]],
  });
  return rows.map((m) => ({
    userId: m.userId,
    name: m.user!.name,
    email: m.user!.email,
    role: m.role,
    joinedAt: m.createdAt.toISOString(),
  }));
}

/**
 * Takes the lab row's lock before any membership row, so membership changes of one lab run one after
 * another; without it two owners stepping down at once lock each other's rows in opposite order and
 * one of them ends in a deadlock (a 500) instead of the 409 below.
 */
async function lockLab(labId: number, transaction: Transaction): Promise<void> {
  const { Lab } = db();
  const lab = await Lab.findByPk(labId, { transaction, lock: transaction.LOCK.UPDATE });
  if (!lab) throw notFound("That lab");
}

/** Locks the lab's owner rows and fails when the change would leave the lab without an owner. */
async function keepAnOwner(labId: number, leavingUserId: number, transaction: Transaction): Promise<void> {
  const { Membership } = db();
  const owners = await Membership.findAll({ where: { labId, role: "owner" }, transaction, lock: transaction.LOCK.UPDATE });
  if (owners.length === 1 && owners[0].userId === leavingUserId) {
    throw conflict("A lab must keep at least one owner. Make someone else an owner first.");
  }
}

export async function changeRole(actor: Actor, labId: number, userId: number, role: Role, ip: string | null): Promise<MemberOut> {
  const { Membership, sequelize } = db();
  await sequelize.transaction(async (transaction) => {
    await lockLab(labId, transaction);
    const member = await Membership.findOne({ where: { labId, userId }, transaction, lock: transaction.LOCK.UPDATE });
    if (!member) throw notFound("That member");
    if (member.role === role) return;
    if (member.role === "owner") await keepAnOwner(labId, userId, transaction);
    const from = member.role;
    await member.update({ role }, { transaction });
    await audit({ action: "member.role_changed", labId, actorId: actor.id, target: String(userId), ip, detail: { from, to: role } }, transaction);
  });
  const member = (await listMembers(labId)).find((m) => m.userId === userId);
  if (!member) throw notFound("That member");
  return member;
}

export async function removeMember(actor: Actor, labId: number, userId: number, ip: string | null): Promise<void> {
  const { Membership, sequelize } = db();
  await sequelize.transaction(async (transaction) => {
    await lockLab(labId, transaction);
    const member = await Membership.findOne({ where: { labId, userId }, transaction, lock: transaction.LOCK.UPDATE });
    if (!member) throw notFound("That member");
    if (member.role === "owner") await keepAnOwner(labId, userId, transaction);
    await member.destroy({ transaction });
    await audit({ action: "member.removed", labId, actorId: actor.id, target: String(userId), ip, detail: { role: member.role } }, transaction);
  });
}

function invitationStatus(inv: Invitation): InvitationOut["status"] {
  if (inv.acceptedAt) return "accepted";
  if (inv.revokedAt) return "revoked";
  if (inv.expiresAt.getTime() < Date.now()) return "expired";
  return "pending";
}

export async function listInvitations(labId: number): Promise<InvitationOut[]> {
  const { Invitation, User } = db();
  const rows = await Invitation.findAll({
    where: { labId },
    include: [{ model: User, as: "invitedBy" }],
    order: [["createdAt", "DESC"]],
    limit: 200,
  });
  return rows.map((inv) => ({
    id: inv.id,
    email: inv.email,
    role: inv.role,
    status: invitationStatus(inv),
    invitedBy: inv.invitedBy?.name ?? null,
    expiresAt: inv.expiresAt.toISOString(),
    createdAt: inv.createdAt.toISOString(),
  }));
}

export async function createInvitation(
  actor: Actor,
  lab: Lab,
  body: CreateInvitationBody,
  ip: string | null,
): Promise<InvitationOut> {
  const { Invitation, Membership, User, sequelize } = db();
  const { token, hash } = newToken();
  const invitation = await sequelize.transaction(async (transaction) => {
    const existingUser = await User.findOne({ where: { email: body.email }, transaction });
    if (existingUser && (await Membership.findOne({ where: { labId: lab.id, userId: existingUser.id }, transaction }))) {
      throw conflict(`${body.email} is already a member of this lab.`, { email: "Already a member." });
    }
    // A new invitation replaces any pending one for the same address, so only the newest link works.
    // Found with a plain read and revoked by primary key: an UPDATE over the (lab, e-mail) range takes
    // gap locks that deadlock with invitations being created in other labs at the same time (a 500).
    const pending = await Invitation.findAll({
      attributes: ["id"],
      where: { labId: lab.id, email: body.email, acceptedAt: null, revokedAt: null },
      transaction,
    });
    if (pending.length) {
      await Invitation.update({ revokedAt: new Date() }, { where: { id: pending.map((p) => p.id) }, transaction });
    }
    const created = await Invitation.create(
      {
        labId: lab.id,
        email: body.email,
        role: body.role,
        tokenHash: hash,
        invitedById: actor.id,
        expiresAt: new Date(Date.now() + INVITATION_DAYS * 86_400_000),
      },
      { transaction },
    );
    await audit({ action: "invitation.created", labId: lab.id, actorId: actor.id, target: body.email, ip, detail: { role: body.role } }, transaction);
    return created;
  });
  // Sent after the commit: a mail failure leaves a pending invitation the owner can re-send, never a
  // link to an invitation that does not exist.
  await sendMail({
    to: body.email,
    subject: `${actor.name} invited you to ${lab.name} on Fluxframe`,
    text:
      `${actor.name} (${actor.email}) invited you to join the lab "${lab.name}" on Fluxframe as ${body.role}.\n\n` +
      `Open this link to accept (it works once, for ${body.email} only, and expires in ${INVITATION_DAYS} days):\n\n` +
      `${appUrl(`/invite/${token}`)}\n`,
  });
  return {
    id: invitation.id,
    email: invitation.email,
    role: invitation.role,
    status: "pending",
    invitedBy: actor.name,
    expiresAt: invitation.expiresAt.toISOString(),
    createdAt: invitation.createdAt.toISOString(),
  };
}

export async function revokeInvitation(actor: Actor, labId: number, invitationId: number, ip: string | null): Promise<void> {
  const { Invitation, sequelize } = db();
  await sequelize.transaction(async (transaction) => {
    const inv = await Invitation.findOne({ where: { id: invitationId, labId }, transaction, lock: transaction.LOCK.UPDATE });
    if (!inv) throw notFound("That invitation");
    if (inv.acceptedAt) throw conflict("This invitation was already accepted; remove the member instead.");
    if (!inv.revokedAt) {
      await inv.update({ revokedAt: new Date() }, { transaction });
      await audit({ action: "invitation.revoked", labId, actorId: actor.id, target: inv.email, ip }, transaction);
    }
  });
}

async function findByToken(token: string, transaction?: Transaction) {
  const { Invitation, Lab } = db();
  return Invitation.findOne({
    where: { tokenHash: hashToken(token) },
    include: [{ model: Lab, as: "lab" }],
    transaction,
    lock: transaction ? transaction.LOCK.UPDATE : undefined,
  });
}

export async function previewInvitation(token: string): Promise<InvitationPreviewOut> {
  const inv = await findByToken(token);
  if (!inv || !inv.lab) throw notFound("That invitation");
  return {
    labName: inv.lab.name,
    email: inv.email,
    role: inv.role,
    status: invitationStatus(inv),
    expiresAt: inv.expiresAt.toISOString(),
  };
}

export async function acceptInvitation(actor: Actor, token: string, ip: string | null): Promise<{ labId: number; role: Role }> {
  const { Membership, sequelize } = db();
  return sequelize.transaction(async (transaction) => {
    const inv = await findByToken(token, transaction);
    if (!inv) throw notFound("That invitation");
    const status = invitationStatus(inv);
    if (status === "accepted") throw gone("This invitation was already used.");
    if (status === "revoked") throw gone("This invitation was withdrawn or replaced by a newer one.");
    if (status === "expired") throw gone("This invitation has expired. Ask the lab owner for a new one.");
    if (inv.email !== actor.email.toLowerCase()) {
      throw forbidden(`This invitation was sent to ${inv.email}. Sign in with that address to accept it.`);
    }
    const existing = await Membership.findOne({ where: { labId: inv.labId, userId: actor.id }, transaction });
    if (existing) throw conflict("You are already a member of this lab.");
    await Membership.create({ labId: inv.labId, userId: actor.id, role: inv.role }, { transaction });
    await inv.update({ acceptedAt: new Date(), acceptedById: actor.id }, { transaction });
    await audit({ action: "invitation.accepted", labId: inv.labId, actorId: actor.id, target: inv.email, ip, detail: { role: inv.role } }, transaction);
    return { labId: inv.labId, role: inv.role };
  });
}

export async function listAudit(labId: number, action: string | undefined, limit: number): Promise<AuditEventOut[]> {
  const { AuditEvent, User } = db();
  const rows = await AuditEvent.findAll({
    where: { labId, ...(action ? { action: { [Op.startsWith]: action } } : {}) },
    include: [{ model: User, as: "actor" }],
    order: [["id", "DESC"]],
    limit,
  });
  return rows.map((e) => ({
    id: Number(e.id),
    action: e.action,
    actor: e.actor ? `${e.actor.name} <${e.actor.email}>` : null,
    target: e.target,
    ip: e.ip,
    createdAt: e.createdAt.toISOString(),
  }));
}
