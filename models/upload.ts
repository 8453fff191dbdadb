import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from "sequelize";

export type UploadStatus = "open" | "completing" | "completed" | "failed" | "cancelled";

export class Upload extends Model<InferAttributes<Upload>, InferCreationAttributes<Upload>> {
  declare id: string;
  declare labId: number;
  declare userId: number;
  declare fileName: string;
  declare sizeBytes: number;
  /** Every part but the last has exactly this many bytes. */
  declare partSize: number;
  declare status: UploadStatus;
  declare failureReason: CreationOptional<string | null>;
  /** Dimensions typed by the uploader for files without OME-XML. */
  declare dimensions: CreationOptional<Record<string, unknown> | null>;
  declare datasetId: CreationOptional<number | null>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize) {
    Upload.init(
      {
        id: { type: DataTypes.CHAR(36), primaryKey: true },
        labId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        userId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        fileName: { type: DataTypes.STRING(255), allowNull: false },
        sizeBytes: {
          type: DataTypes.BIGINT.UNSIGNED,
          allowNull: false,
          get() {
            return Number(this.getDataValue("sizeBytes"));
          },
        },
        partSize: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        status: { type: DataTypes.ENUM("open", "completing", "completed", "failed", "cancelled"), allowNull: false },
        failureReason: { type: DataTypes.TEXT, allowNull: true },
        dimensions: { type: DataTypes.JSON, allowNull: true },
        datasetId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, modelName: "Upload", tableName: "uploads", underscored: true },
    );
  }
}

export class UploadPart extends Model<InferAttributes<UploadPart>, InferCreationAttributes<UploadPart>> {
  declare id: CreationOptional<number>;
  declare uploadId: string;
  /** 1-based, as in the URL. */
  declare partNumber: number;
  declare sizeBytes: number;
  declare sha256: string;
  declare createdAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize) {
    UploadPart.init(
      {
        id: { type: DataTypes.BIGINT.UNSIGNED, autoIncrement: true, primaryKey: true },
        uploadId: { type: DataTypes.CHAR(36), allowNull: false },
        partNumber: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        sizeBytes: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        sha256: { type: DataTypes.CHAR(64), allowNull: false },
        createdAt: DataTypes.DATE,
      },
      { sequelize, modelName: "UploadPart", tableName: "upload_parts", underscored: true, updatedAt: false },
    );
  }
}
