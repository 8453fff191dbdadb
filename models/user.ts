import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from "sequelize";

export class User extends Model<InferAttributes<User>, InferCreationAttributes<User>> {
  declare id: CreationOptional<number>;
  /** Stored lower-case; the column's collation is case-insensitive as well. */
  declare email: string;
  declare name: string;
  declare passwordHash: string;
  declare isSiteAdmin: CreationOptional<boolean>;
  /** Sessions signed in before this moment are refused (set by a password reset). */
  declare sessionsValidAfter: CreationOptional<Date | null>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize) {
    User.init(
      {
        id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
        email: { type: DataTypes.STRING(254), allowNull: false, unique: true },
        name: { type: DataTypes.STRING(120), allowNull: false },
        passwordHash: { type: DataTypes.STRING(100), allowNull: false },
        isSiteAdmin: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
        sessionsValidAfter: { type: DataTypes.DATE(3), allowNull: true },
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      {
        sequelize,
        modelName: "User", // explicit: bundlers minify class names
        tableName: "users",
        underscored: true,
        // The hash never leaves the model unless a caller asks for it with User.unscoped().
        defaultScope: { attributes: { exclude: ["passwordHash"] } },
      },
    );
  }
}
