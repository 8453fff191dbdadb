import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type NonAttribute, type Sequelize } from "sequelize";
import type { User } from "./user";

export class AuditEvent extends Model<InferAttributes<AuditEvent>, InferCreationAttributes<AuditEvent>> {
  declare id: CreationOptional<number>;
  declare labId: number | null;
  declare actorId: number | null;
  /** Dotted verb, e.g. "member.role_changed"; see lib/server/audit.ts for the list. */
  declare action: string;
  declare target: string | null;
  declare ip: string | null;
  declare detail: Record<string, unknown> | null;
  declare createdAt: CreationOptional<Date>;
  declare actor?: NonAttribute<User>;

  static initModel(sequelize: Sequelize) {
    AuditEvent.init(
      {
        id: { type: DataTypes.BIGINT.UNSIGNED, autoIncrement: true, primaryKey: true },
        labId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
        actorId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
        action: { type: DataTypes.STRING(64), allowNull: false },
        target: { type: DataTypes.STRING(255), allowNull: true },
        ip: { type: DataTypes.STRING(64), allowNull: true },
        detail: { type: DataTypes.JSON, allowNull: true },
        createdAt: DataTypes.DATE,
      },
      { sequelize, modelName: "AuditEvent", tableName: "audit_events", underscored: true, updatedAt: false },
    );
  }
}
