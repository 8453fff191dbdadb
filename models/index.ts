import type { Sequelize } from "sequelize";
import { AuditEvent } from "./audit-event";
import { Dataset } from "./dataset";
import { Job } from "./job";
import { ChannelStat, Plane } from "./plane";
import { Upload, UploadPart } from "./upload";
import { Invitation } from "./invitation";
import { Lab } from "./lab";
import { Membership } from "./membership";
import { PasswordReset } from "./password-reset";
import { Preset } from "./preset";
import { User } from "./user";
import { ViewState } from "./view-state";
import { SavedView } from "./saved-view";
import { ViewLink } from "./view-link";
import { ColourTable } from "./colour-table";
import { DetectorProfile } from "./detector-profile";
import { Region } from "./region";

export type { ChannelInfo, DatasetStatus } from "./dataset";
export type { LinkAccess } from "./view-link";
export { AuditEvent, ChannelStat, Dataset, Invitation, Job, Lab, Membership, PasswordReset, Plane, Preset, Upload, UploadPart, User, ViewState, SavedView, ViewLink, ColourTable, DetectorProfile, Region };

export const models = { User, Lab, Membership, Invitation, PasswordReset, AuditEvent, Dataset, Plane, ChannelStat, Upload, UploadPart, Job, Preset, ViewState, SavedView, ViewLink, ColourTable, DetectorProfile, Region };
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
  Dataset.belongsTo(User, { as: "uploadedBy", foreignKey: "uploadedById" });
  Dataset.hasMany(Plane, { as: "planes", foreignKey: "datasetId" });
  Dataset.hasMany(ChannelStat, { as: "channelStats", foreignKey: "datasetId" });
  Preset.belongsTo(Lab, { as: "lab", foreignKey: "labId" });
  Preset.belongsTo(User, { as: "owner", foreignKey: "ownerId" });
  ViewState.belongsTo(User, { as: "user", foreignKey: "userId" });
  ViewState.belongsTo(Dataset, { as: "dataset", foreignKey: "datasetId" });
  SavedView.belongsTo(User, { as: "owner", foreignKey: "ownerId" });
  ViewLink.belongsTo(User, { as: "createdBy", foreignKey: "createdById" });
  ViewLink.belongsTo(Dataset, { as: "dataset", foreignKey: "datasetId" });
  ColourTable.belongsTo(Lab, { as: "lab", foreignKey: "labId" });
  ColourTable.belongsTo(User, { as: "owner", foreignKey: "ownerId" });
  DetectorProfile.belongsTo(User, { as: "createdBy", foreignKey: "createdById" });
  Dataset.belongsTo(DetectorProfile, { as: "detectorProfile", foreignKey: "detectorProfileId" });
  Region.belongsTo(User, { as: "createdBy", foreignKey: "createdById" });
  return models;
}
