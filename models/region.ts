import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from "sequelize";

/** A region of interest on one dataset (lib/schemas/region.ts validates `geometry` per `kind`). */
export class Region extends Model<InferAttributes<Region>, InferCreationAttributes<Region>> {
  declare id: CreationOptional<number>;
  declare datasetId: number;
  declare createdById: number | null;
  declare name: string;
  declare kind: "rect" | "ellipse" | "polygon" | "line";
  declare geometry: unknown;
  declare colour: string;
  declare version: CreationOptional<number>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize) {
    Region.init(
      {
        id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
        datasetId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        createdById: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
        name: { type: DataTypes.STRING(120), allowNull: false },
        kind: { type: DataTypes.ENUM("rect", "ellipse", "polygon", "line"), allowNull: false },
        geometry: { type: DataTypes.JSON, allowNull: false },
        colour: { type: DataTypes.CHAR(7), allowNull: false },
        version: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 1 },
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, modelName: "Region", tableName: "regions", underscored: true },
    );
  }
}
