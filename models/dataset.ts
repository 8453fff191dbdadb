import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type NonAttribute, type Sequelize } from "sequelize";
import type { DetectorProfile } from "./detector-profile";
import type { User } from "./user";

export type DatasetStatus = "queued" | "ingesting" | "ready" | "failed";

export interface ChannelInfo {
  name: string;
  /** Display colour as #rrggbb; a default when the file does not say. */
  colour: string;
  /** Emission wavelength in nm, when known. */
  emissionNm: number | null;
}

export class Dataset extends Model<InferAttributes<Dataset>, InferCreationAttributes<Dataset>> {
  declare id: CreationOptional<number>;
  declare labId: number;
  declare uploadedById: number | null;
  declare title: string;
  declare originalName: string;
  declare status: DatasetStatus;
  declare failureReason: CreationOptional<string | null>;
  declare progressDone: CreationOptional<number>;
  declare progressTotal: CreationOptional<number>;
  /** Bytes of the original file, which is stored once and never rewritten. */
  declare sizeBytes: number;
  declare sha256: string;
  declare blobKey: string;
  declare thumbnailKey: CreationOptional<string | null>;
  declare littleEndian: CreationOptional<boolean | null>;
  declare bigTiff: CreationOptional<boolean | null>;
  declare width: CreationOptional<number | null>;
  declare height: CreationOptional<number | null>;
  declare bitsPerSample: CreationOptional<number | null>;
  declare sampleFormat: CreationOptional<number | null>;
  declare compression: CreationOptional<string | null>;
  declare lossy: CreationOptional<boolean>;
  declare planeCount: CreationOptional<number | null>;
  declare sizeC: CreationOptional<number | null>;
  declare sizeZ: CreationOptional<number | null>;
  declare sizeT: CreationOptional<number | null>;
  declare dimensionOrder: CreationOptional<string | null>;
  declare dimensionsFrom: CreationOptional<"ome-xml" | "form" | null>;
  declare significantBits: CreationOptional<number | null>;
  /** Highest code the detector can produce (DN), and how it was found (see acquisition.ceilingFrom). */
  declare ceiling: CreationOptional<number | null>;
  /** Micrometres per pixel / per z step, seconds per time point. */
  declare physicalSizeX: CreationOptional<number | null>;
  declare physicalSizeY: CreationOptional<number | null>;
  declare physicalSizeZ: CreationOptional<number | null>;
  declare timeIncrement: CreationOptional<number | null>;
  declare channels: CreationOptional<ChannelInfo[] | null>;
  /** Read-only facts from the file (byte order, codec, OME image name, ceiling rule…). */
  declare acquisition: CreationOptional<Record<string, unknown> | null>;
  declare experiment: CreationOptional<string | null>;
  declare sample: CreationOptional<string | null>;
  declare treatment: CreationOptional<string | null>;
  declare notes: CreationOptional<string | null>;
  declare tags: CreationOptional<string[] | null>;
  /** The camera the dataset was taken with (Detectors page); null = none named. */
  declare detectorProfileId: CreationOptional<number | null>;
  declare deletedAt: CreationOptional<Date | null>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
  declare uploadedBy?: NonAttribute<User>;
  declare detectorProfile?: NonAttribute<DetectorProfile | null>;

  static initModel(sequelize: Sequelize) {
    const int = (allowNull = true) => ({ type: DataTypes.INTEGER.UNSIGNED, allowNull });
    Dataset.init(
      {
        id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
        labId: int(false),
        uploadedById: int(),
        title: { type: DataTypes.STRING(200), allowNull: false },
        originalName: { type: DataTypes.STRING(255), allowNull: false },
        status: { type: DataTypes.ENUM("queued", "ingesting", "ready", "failed"), allowNull: false },
        failureReason: { type: DataTypes.TEXT, allowNull: true },
        progressDone: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 0 },
        progressTotal: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 0 },
        // BIGINT comes back from the driver as a string or bigint; the getter keeps it a number (< 2^53).
        sizeBytes: {
          type: DataTypes.BIGINT.UNSIGNED,
          allowNull: false,
          get() {
            return Number(this.getDataValue("sizeBytes"));
          },
        },
        sha256: { type: DataTypes.CHAR(64), allowNull: false },
        blobKey: { type: DataTypes.STRING(255), allowNull: false, unique: true },
        thumbnailKey: { type: DataTypes.STRING(255), allowNull: true },
        littleEndian: { type: DataTypes.BOOLEAN, allowNull: true },
        bigTiff: { type: DataTypes.BOOLEAN, allowNull: true },
        width: int(),
        height: int(),
        bitsPerSample: { type: DataTypes.TINYINT.UNSIGNED, allowNull: true },
        sampleFormat: { type: DataTypes.TINYINT.UNSIGNED, allowNull: true },
        compression: { type: DataTypes.STRING(40), allowNull: true },
        lossy: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
        planeCount: int(),
        sizeC: int(),
        sizeZ: int(),
        sizeT: int(),
        dimensionOrder: { type: DataTypes.STRING(5), allowNull: true },
        dimensionsFrom: { type: DataTypes.ENUM("ome-xml", "form"), allowNull: true },
        significantBits: { type: DataTypes.TINYINT.UNSIGNED, allowNull: true },
        ceiling: int(),
        physicalSizeX: { type: DataTypes.DOUBLE, allowNull: true },
        physicalSizeY: { type: DataTypes.DOUBLE, allowNull: true },
        physicalSizeZ: { type: DataTypes.DOUBLE, allowNull: true },
        timeIncrement: { type: DataTypes.DOUBLE, allowNull: true },
        channels: { type: DataTypes.JSON, allowNull: true },
        acquisition: { type: DataTypes.JSON, allowNull: true },
        experiment: { type: DataTypes.STRING(200), allowNull: true },
        sample: { type: DataTypes.STRING(200), allowNull: true },
        treatment: { type: DataTypes.STRING(200), allowNull: true },
        notes: { type: DataTypes.TEXT, allowNull: true },
        tags: { type: DataTypes.JSON, allowNull: true },
        detectorProfileId: int(),
        deletedAt: { type: DataTypes.DATE, allowNull: true },
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, modelName: "Dataset", tableName: "datasets", underscored: true },
    );
  }
}
