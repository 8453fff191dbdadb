import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from "sequelize";

export type PresetScope = "private" | "lab";
export type BlendMode = "add" | "max";

/** A named set of channel mappings. `channels` is validated by lib/schemas/preset.ts on the way in and out. */
export class Preset extends Model<InferAttributes<Preset>, InferCreationAttributes<Preset>> {
  declare id: CreationOptional<number>;
  declare labId: number;
  declare ownerId: number | null;
  declare name: string;
  declare scope: PresetScope;
  declare blend: BlendMode;
  declare channels: unknown;
  /** 0 for a lab preset, the owner's id for a private one: the scope in which the name must be unique. */
  declare nameScopeKey: number;
  /** Optimistic concurrency: every successful update adds 1; a save naming an older version is refused. */
  declare version: CreationOptional<number>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize) {
    Preset.init(
      {
        id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
        labId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        ownerId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
        name: { type: DataTypes.STRING(120), allowNull: false },
        scope: { type: DataTypes.ENUM("private", "lab"), allowNull: false },
        blend: { type: DataTypes.ENUM("add", "max"), allowNull: false },
        channels: { type: DataTypes.JSON, allowNull: false },
        nameScopeKey: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        version: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 1 },
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, modelName: "Preset", tableName: "presets", underscored: true },
    );
  }
}
