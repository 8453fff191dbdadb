import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type NonAttribute, type Sequelize } from "sequelize";
import type { User } from "./user";

export type DetectorProfileSource = "manual" | "measured";

/**
 * A lab's camera as numbers (migrations/0007). The gain is stored in one unit only: K in DN per
 * electron as EMVA 1288 defines it (the API converts from e⁻ per DN). `fit` holds the photon-transfer
 * summary of a measured profile (lib/schemas/detector-profile.ts PhotonTransferSummary).
 */
export class DetectorProfile extends Model<InferAttributes<DetectorProfile>, InferCreationAttributes<DetectorProfile>> {
  declare id: CreationOptional<number>;
  declare labId: number;
  declare name: string;
  /** ADC bits: the ceiling is 2^bitDepth − 1. */
  declare bitDepth: number;
  /** Dark level added by the camera, DN. */
  declare offsetDn: number;
  /** System gain K, DN per electron. */
  declare gainDnPerE: number;
  /** Temporal dark noise σd, electrons RMS; null when not known. */
  declare readNoiseE: number | null;
  /** Electrons at saturation; null when not known. */
  declare saturationCapacityE: number | null;
  declare notes: string | null;
  declare source: DetectorProfileSource;
  declare sourceDatasetId: number | null;
  declare fit: unknown;
  declare createdById: number | null;
  /** Optimistic concurrency: every successful update adds 1; a save naming an older version is refused. */
  declare version: CreationOptional<number>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
  declare createdBy?: NonAttribute<User | null>;

  static initModel(sequelize: Sequelize) {
    DetectorProfile.init(
      {
        id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
        labId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        name: { type: DataTypes.STRING(120), allowNull: false },
        bitDepth: { type: DataTypes.TINYINT.UNSIGNED, allowNull: false },
        offsetDn: { type: DataTypes.DOUBLE, allowNull: false },
        gainDnPerE: { type: DataTypes.DOUBLE, allowNull: false },
        readNoiseE: { type: DataTypes.DOUBLE, allowNull: true },
        saturationCapacityE: { type: DataTypes.DOUBLE, allowNull: true },
        notes: { type: DataTypes.TEXT, allowNull: true },
        source: { type: DataTypes.ENUM("manual", "measured"), allowNull: false },
        sourceDatasetId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
        fit: { type: DataTypes.JSON, allowNull: true },
        createdById: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
        version: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 1 },
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, modelName: "DetectorProfile", tableName: "detector_profiles", underscored: true },
    );
  }
}
