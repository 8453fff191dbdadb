import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from "sequelize";

export type LinkAccess = "anyone" | "lab" | "emails";

/** A link to an immutable snapshot of a view. Only the token's SHA-256 is stored (lib/server/tokens.ts). */
export class ViewLink extends Model<InferAttributes<ViewLink>, InferCreationAttributes<ViewLink>> {
  declare id: CreationOptional<number>;
  declare datasetId: number;
  declare createdById: number | null;
  declare tokenHash: string;
  declare state: unknown;
  declare access: LinkAccess;
  declare emails: string[] | null;
  declare allowDownload: CreationOptional<boolean>;
  declare expiresAt: Date | null;
  declare revokedAt: CreationOptional<Date | null>;
  declare revokedById: CreationOptional<number | null>;
  declare opens: CreationOptional<number>;
  declare lastOpenedAt: CreationOptional<Date | null>;
  declare previewKey: CreationOptional<string | null>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize) {
    ViewLink.init(
      {
        id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
        datasetId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        createdById: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
        tokenHash: { type: DataTypes.CHAR(64), allowNull: false },
        state: { type: DataTypes.JSON, allowNull: false },
        access: { type: DataTypes.ENUM("anyone", "lab", "emails"), allowNull: false },
        emails: { type: DataTypes.JSON, allowNull: true },
        allowDownload: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
        expiresAt: { type: DataTypes.DATE(3), allowNull: true },
        revokedAt: { type: DataTypes.DATE(3), allowNull: true },
        revokedById: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
        opens: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 0 },
        lastOpenedAt: { type: DataTypes.DATE(3), allowNull: true },
        previewKey: { type: DataTypes.STRING(255), allowNull: true },
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, modelName: "ViewLink", tableName: "view_links", underscored: true },
    );
  }
}
