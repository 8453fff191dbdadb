import "server-only";
import type { Role } from "@/lib/permissions";
import { db } from "./db";
import { hashPassword } from "./passwords";

// Invented demo data for a lab that does not exist: the passwords are deliberately obvious.
export const DEMO_LAB = "Harbourside Membrane Dynamics Lab (demo)";
export const DEMO_USERS: { email: string; name: string; password: string; role: Role; siteAdmin: boolean }[] = [
  { email: "olive.owner@demo.fluxframe.test", name: "Olive Owner (demo)", password: "demo-owner-pass", role: "owner", siteAdmin: true },
  { email: "eddie.editor@demo.fluxframe.test", name: "Eddie Editor (demo)", password: "demo-editor-pass", role: "editor", siteAdmin: false },
  { email: "vera.viewer@demo.fluxframe.test", name: "Vera Viewer (demo)", password: "demo-viewer-pass", role: "viewer", siteAdmin: false },
];

/** Creates the demo lab and its three members; running it again changes nothing. */
export async function seedDemo(): Promise<{ labId: number }> {
  const { User, Lab, Membership, sequelize } = db();
  return sequelize.transaction(async (transaction) => {
    const users = [];
    for (const demo of DEMO_USERS) {
      let user = await User.findOne({ where: { email: demo.email }, transaction });
      user ??= await User.create(
        { email: demo.email, name: demo.name, passwordHash: await hashPassword(demo.password), isSiteAdmin: demo.siteAdmin },
        { transaction },
      );
      users.push({ user, role: demo.role });
    }
    let lab = await Lab.findOne({ where: { name: DEMO_LAB }, transaction });
    lab ??= await Lab.create({ name: DEMO_LAB, createdById: users[0].user.id }, { transaction });
    for (const { user, role } of users) {
      await Membership.findOrCreate({ where: { labId: lab.id, userId: user.id }, defaults: { labId: lab.id, userId: user.id, role }, transaction });
    }
    return { labId: lab.id };
  });
}
