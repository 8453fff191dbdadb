import type { Sequelize } from "sequelize";
import { AuditEvent } from "./audit-event";
import { Invitation } from "./invitation";
import { Lab } from "./lab";
import { Membership } from "./membership";
import { PasswordReset } from "./password-reset";
import { User } from "./user";

export { AuditEvent, Invitation, Lab, Membership, PasswordReset, User };

export const models = { User, Lab, Membership, Invitation, PasswordReset, AuditEvent };
export type Models = typeof models;

/** Binds every model to one Sequelize instance and declares the associations. Call once per process. */
export function initModels(sequelize: Sequelize): Models {
  for (const model of Object.values(models)) model.initModel(sequelize);
  Membership.belongsTo(User, { as: "user", foreignKey: "userId" });
  Membership.belongsTo(Lab, { as: "lab", foreignKey: "labId" });
  Lab.hasMany(Membership, { as: "memberships", foreignKey: "labId" });
  User.hasMany(Membership, { as: "memberships", foreignKey: "userId" });
  Invitation.belongsTo(Lab, { as: "lab", foreignKey: "labId" });
  Invitation.belongsTo(User, { as: "invitedBy", foreignKey: "invitedById" });
  AuditEvent.belongsTo(User, { as: "actor", foreignKey: "actorId" });
  return models;
}
