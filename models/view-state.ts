import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from "sequelize";

/** One person's last state on one dataset; never shared. `state` is validated by lib/schemas/preset.ts. */
export class ViewState extends Model<InferAttributes<ViewState>, InferCreationAttributes<ViewState>> {
  declare id: CreationOptional<number>;
  declare userId: number;
  declare datasetId: number;
  declare state: unknown;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize) {
    ViewState.init(
      {
        id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
        userId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        datasetId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        state: { type: DataTypes.JSON, allowNull: false },
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, modelName: "ViewState", tableName: "view_states", underscored: true },
    );
  }
}
