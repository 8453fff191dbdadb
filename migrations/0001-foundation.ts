// Users, labs, memberships, invitations, password resets and the audit log.
// All times are stored in UTC (the connection and the server run at +00:00).
import { DataTypes, type QueryInterface } from "sequelize";
import type { MigrationContext } from "@/lib/server/migrate";

const id = { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true, allowNull: false };
const stamps = {
  created_at: { type: DataTypes.DATE, allowNull: false },
  updated_at: { type: DataTypes.DATE, allowNull: false },
};
const fk = (table: string, onDelete: "CASCADE" | "SET NULL", allowNull = onDelete === "SET NULL") => ({
  type: DataTypes.INTEGER.UNSIGNED,
  allowNull,
  references: { model: table, key: "id" },
  onDelete,
  onUpdate: "CASCADE",
});
const role = { type: DataTypes.ENUM("viewer", "editor", "owner"), allowNull: false };

export async function up({ queryInterface: q }: MigrationContext): Promise<void> {
  await q.createTable("users", {
    id,
    email: { type: DataTypes.STRING(254), allowNull: false, unique: true },
    name: { type: DataTypes.STRING(120), allowNull: false },
    password_hash: { type: DataTypes.STRING(100), allowNull: false },
    is_site_admin: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
    ...stamps,
  });
  await q.createTable("labs", {
    id,
    name: { type: DataTypes.STRING(120), allowNull: false },
    created_by_id: fk("users", "SET NULL"),
    ...stamps,
  });
  await q.createTable("memberships", {
    id,
    lab_id: fk("labs", "CASCADE"),
    user_id: fk("users", "CASCADE"),
    role,
    ...stamps,
  });
  await q.addIndex("memberships", ["lab_id", "user_id"], { unique: true, name: "memberships_lab_user" });
  await q.addIndex("memberships", ["user_id"], { name: "memberships_user" });

  await q.createTable("invitations", {
    id,
    lab_id: fk("labs", "CASCADE"),
    email: { type: DataTypes.STRING(254), allowNull: false },
    role,
    token_hash: { type: DataTypes.CHAR(64), allowNull: false, unique: true },
    invited_by_id: fk("users", "SET NULL"),
    expires_at: { type: DataTypes.DATE, allowNull: false },
    accepted_at: { type: DataTypes.DATE, allowNull: true },
    accepted_by_id: fk("users", "SET NULL"),
    revoked_at: { type: DataTypes.DATE, allowNull: true },
    ...stamps,
  });
  await q.addIndex("invitations", ["lab_id", "email"], { name: "invitations_lab_email" });

  await q.createTable("password_resets", {
    id,
    user_id: fk("users", "CASCADE"),
    token_hash: { type: DataTypes.CHAR(64), allowNull: false, unique: true },
    expires_at: { type: DataTypes.DATE, allowNull: false },
    used_at: { type: DataTypes.DATE, allowNull: true },
    created_at: { type: DataTypes.DATE, allowNull: false },
  });

  await q.createTable("audit_events", {
    id: { type: DataTypes.BIGINT.UNSIGNED, autoIncrement: true, primaryKey: true, allowNull: false },
    lab_id: fk("labs", "SET NULL"),
    actor_id: fk("users", "SET NULL"),
    action: { type: DataTypes.STRING(64), allowNull: false },
    target: { type: DataTypes.STRING(255), allowNull: true },
    ip: { type: DataTypes.STRING(64), allowNull: true },
    detail: { type: DataTypes.JSON, allowNull: true },
    created_at: { type: DataTypes.DATE, allowNull: false },
  });
  await q.addIndex("audit_events", ["lab_id", "created_at"], { name: "audit_events_lab_time" });
  await q.addIndex("audit_events", ["action"], { name: "audit_events_action" });
}

// MariaDB commits DDL implicitly, so a transaction cannot make this atomic; dropping in reverse
// dependency order with IF EXISTS makes a half-finished down() safe to run again.
export async function down({ queryInterface: q }: MigrationContext): Promise<void> {
  for (const table of ["audit_events", "password_resets", "invitations", "memberships", "labs", "users"]) {
    await (q as QueryInterface).dropTable(table);
  }
}
