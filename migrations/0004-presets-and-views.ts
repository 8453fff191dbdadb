// Presets (named sets of channel mappings, private to a person or shared with the lab) and view
// states (one person's last state on one dataset). Display choices are data; pixels never change.
import { DataTypes } from "sequelize";
import type { MigrationContext } from "@/lib/server/migrate";

const id = { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true, allowNull: false };
const stamps = {
  created_at: { type: DataTypes.DATE, allowNull: false },
  updated_at: { type: DataTypes.DATE, allowNull: false },
};
const fk = (table: string, onDelete: "CASCADE" | "SET NULL") => ({
  type: DataTypes.INTEGER.UNSIGNED,
  allowNull: onDelete === "SET NULL",
  references: { model: table, key: "id" },
  onDelete,
  onUpdate: "CASCADE",
});

export async function up({ queryInterface: q }: MigrationContext): Promise<void> {
  await q.createTable("presets", {
    id,
    lab_id: fk("labs", "CASCADE"),
    // A lab preset outlives the account that made it; a private one without owner is seen by nobody.
    owner_id: fk("users", "SET NULL"),
    name: { type: DataTypes.STRING(120), allowNull: false },
    scope: { type: DataTypes.ENUM("private", "lab"), allowNull: false },
    blend: { type: DataTypes.ENUM("add", "max"), allowNull: false },
    channels: { type: DataTypes.JSON, allowNull: false },
    version: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 1 },
    // Names are unique per lab among lab presets and per person among their private ones: the key is 0
    // for a lab preset and the owner's id for a private one. Kept by the app, not a generated column,
    // because MariaDB refuses generated columns over a column whose foreign key sets it to NULL.
    name_scope_key: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
    ...stamps,
  });
  await q.addIndex("presets", ["lab_id", "name_scope_key", "name"], { unique: true, name: "presets_unique_name" });
  await q.addIndex("presets", ["lab_id", "scope", "owner_id"], { name: "presets_lab_listing" });

  await q.createTable("view_states", {
    id,
    user_id: fk("users", "CASCADE"),
    dataset_id: fk("datasets", "CASCADE"),
    state: { type: DataTypes.JSON, allowNull: false },
    ...stamps,
  });
  await q.addIndex("view_states", ["user_id", "dataset_id"], { unique: true, name: "view_states_user_dataset" });
}

export async function down({ queryInterface: q }: MigrationContext): Promise<void> {
  await q.dropTable("view_states");
  await q.dropTable("presets");
}
