// Regions of interest per dataset (bench "Regions"): drawn by editors, read by the lab. Geometry is
// JSON in image pixels; `version` makes edits optimistic (a stale PATCH gets 409).
import { DataTypes } from "sequelize";
import type { MigrationContext } from "@/lib/server/migrate";

const fk = (table: string, onDelete: "CASCADE" | "SET NULL") => ({
  type: DataTypes.INTEGER.UNSIGNED,
  allowNull: onDelete === "SET NULL",
  references: { model: table, key: "id" },
  onDelete,
  onUpdate: "CASCADE",
});

export async function up({ queryInterface: q }: MigrationContext): Promise<void> {
  await q.createTable("regions", {
    id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true, allowNull: false },
    dataset_id: fk("datasets", "CASCADE"),
    // A region stays with the dataset when the account that drew it is gone.
    created_by_id: fk("users", "SET NULL"),
    name: { type: DataTypes.STRING(120), allowNull: false },
    kind: { type: DataTypes.ENUM("rect", "ellipse", "polygon", "line"), allowNull: false },
    geometry: { type: DataTypes.JSON, allowNull: false },
    colour: { type: DataTypes.CHAR(7), allowNull: false },
    version: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 1 },
    created_at: { type: DataTypes.DATE, allowNull: false },
    updated_at: { type: DataTypes.DATE, allowNull: false },
  });
  await q.addIndex("regions", ["dataset_id", "id"], { name: "regions_dataset" });
}

export async function down({ queryInterface: q }: MigrationContext): Promise<void> {
  // Safe to run again after a half-way failure.
  await q.dropTable("regions");
}
