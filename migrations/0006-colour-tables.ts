// Custom colour tables: 256 sRGB entries made from colour stops (OKLab or CIELAB) or imported from a
// file, private to a person, shared with the lab, or public (readable by every signed-in member of
// any lab). Display choices are data; pixels never change.
import { DataTypes } from "sequelize";
import type { MigrationContext } from "@/lib/server/migrate";

export async function up({ queryInterface: q }: MigrationContext): Promise<void> {
  await q.createTable("colour_tables", {
    id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true, allowNull: false },
    lab_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: "labs", key: "id" }, onDelete: "CASCADE", onUpdate: "CASCADE" },
    // A lab or public table outlives the account that made it; a private one without owner is seen by nobody.
    owner_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true, references: { model: "users", key: "id" }, onDelete: "SET NULL", onUpdate: "CASCADE" },
    name: { type: DataTypes.STRING(120), allowNull: false },
    scope: { type: DataTypes.ENUM("private", "lab", "public"), allowNull: false },
    // Null for an imported table without stops: then the entries alone are the table.
    space: { type: DataTypes.ENUM("oklab", "cielab"), allowNull: true },
    stops: { type: DataTypes.JSON, allowNull: true },
    // The 256 entries × r, g, b as 768 bytes, kept as they are so an imported CSV exports byte for byte.
    rgb: { type: DataTypes.BLOB, allowNull: false },
    version: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 1 },
    // Names are unique per lab among its shared tables (lab and public alike: key 0) and per person
    // among their private ones (key = owner id), as for presets (migration 0004).
    name_scope_key: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
    created_at: { type: DataTypes.DATE, allowNull: false },
    updated_at: { type: DataTypes.DATE, allowNull: false },
  });
  await q.addIndex("colour_tables", ["lab_id", "name_scope_key", "name"], { unique: true, name: "colour_tables_unique_name" });
  await q.addIndex("colour_tables", ["lab_id", "scope", "owner_id"], { name: "colour_tables_lab_listing" });
  await q.addIndex("colour_tables", ["scope"], { name: "colour_tables_public_listing" });
}

export async function down({ queryInterface: q }: MigrationContext): Promise<void> {
  // One statement: safe to run again after a half-way failure (DROP of a missing table is skipped).
  await q.dropTable("colour_tables");
}
