import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type NonAttribute, type Sequelize } from "sequelize";
import type { Lab } from "./lab";
import type { User } from "./user";

export type ColourTableScope = "private" | "lab" | "public";
export type InterpolationSpace = "oklab" | "cielab";

/**
 * A custom colour table. `rgb` (768 bytes) is the table; `stops` and `space`, when present, say how
 * it was made (lib/imaging/table-editor.ts) and are validated by lib/schemas/colour-table.ts.
 */
export class ColourTable extends Model<InferAttributes<ColourTable>, InferCreationAttributes<ColourTable>> {
  declare id: CreationOptional<number>;
  declare labId: number;
  declare ownerId: number | null;
  declare name: string;
  declare scope: ColourTableScope;
  declare space: InterpolationSpace | null;
  declare stops: unknown;
  declare rgb: Buffer;
  /** 0 for a lab or public table, the owner's id for a private one: the scope in which the name must be unique. */
  declare nameScopeKey: number;
  /** Optimistic concurrency: every successful update adds 1; a save naming an older version is refused. */
  declare version: CreationOptional<number>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
  declare owner?: NonAttribute<User | null>;
  declare lab?: NonAttribute<Lab>;

  static initModel(sequelize: Sequelize) {
    ColourTable.init(
      {
        id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
        labId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        ownerId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
        name: { type: DataTypes.STRING(120), allowNull: false },
        scope: { type: DataTypes.ENUM("private", "lab", "public"), allowNull: false },
        space: { type: DataTypes.ENUM("oklab", "cielab"), allowNull: true },
        stops: { type: DataTypes.JSON, allowNull: true },
        rgb: { type: DataTypes.BLOB, allowNull: false },
        nameScopeKey: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        version: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 1 },
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, modelName: "ColourTable", tableName: "colour_tables", underscored: true },
    );
  }
}
