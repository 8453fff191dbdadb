import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from "sequelize";

/** A named snapshot of a view of one dataset, listed for the lab. `state` is validated by lib/schemas/preset.ts. */
export class SavedView extends Model<InferAttributes<SavedView>, InferCreationAttributes<SavedView>> {
  declare id: CreationOptional<number>;
  declare datasetId: number;
  declare ownerId: number | null;
  declare name: string;
  declare state: unknown;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize) {
    SavedView.init(
      {
        id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
        datasetId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        ownerId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
        name: { type: DataTypes.STRING(120), allowNull: false },
        state: { type: DataTypes.JSON, allowNull: false },
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, modelName: "SavedView", tableName: "saved_views", underscored: true },
    );
  }
}
