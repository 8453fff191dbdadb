// Direct database access for assertions such as "nothing changed in the database". Snapshots are
// scoped to one lab or one address, because other test files write to the same database in parallel.
import { db } from "@/lib/server/db";

export async function labSnapshot(labId: number) {
  const { Lab, Membership, Invitation } = db();
  const lab = await Lab.findByPk(labId, { raw: true });
  const memberships = await Membership.findAll({ where: { labId }, order: [["id", "ASC"]], raw: true });
  const invitations = await Invitation.findAll({ where: { labId }, order: [["id", "ASC"]], raw: true });
  return JSON.stringify({ lab, memberships, invitations });
}

export async function usersWithEmail(email: string) {
  return db().User.count({ where: { email } });
}

export { db };
