// Saved views (named snapshots of a view, listed on the dataset page), view links (a token that opens
// an immutable snapshot read-only) and the counters behind rate limits. Tokens are stored only as
// their SHA-256; the plain token exists once, in the creator's browser and e-mail.
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
  await q.createTable("saved_views", {
    id,
    dataset_id: fk("datasets", "CASCADE"),
    // A saved view stays listed for the lab when the account that made it is gone.
    owner_id: fk("users", "SET NULL"),
    name: { type: DataTypes.STRING(120), allowNull: false },
    state: { type: DataTypes.JSON, allowNull: false },
    ...stamps,
  });
  await q.addIndex("saved_views", ["dataset_id", "name"], { unique: true, name: "saved_views_dataset_name" });

  await q.createTable("view_links", {
    id,
    dataset_id: fk("datasets", "CASCADE"),
    created_by_id: fk("users", "SET NULL"),
    token_hash: { type: DataTypes.CHAR(64), allowNull: false },
    state: { type: DataTypes.JSON, allowNull: false },
    access: { type: DataTypes.ENUM("anyone", "lab", "emails"), allowNull: false },
    // Lower-case addresses for access = "emails"; null otherwise.
    emails: { type: DataTypes.JSON, allowNull: true },
    allow_download: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
    // Null = no expiry (lab-member links only; enforced by the app).
    expires_at: { type: DataTypes.DATE(3), allowNull: true },
    revoked_at: { type: DataTypes.DATE(3), allowNull: true },
    revoked_by_id: fk("users", "SET NULL"),
    opens: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 0 },
    last_opened_at: { type: DataTypes.DATE(3), allowNull: true },
    preview_key: { type: DataTypes.STRING(255), allowNull: true },
    ...stamps,
  });
  await q.addIndex("view_links", ["token_hash"], { unique: true, name: "view_links_token_hash" });
  await q.addIndex("view_links", ["dataset_id", "created_at"], { name: "view_links_dataset" });

  // Fixed-window counters: one row per (bucket, key), reset when its window has passed. Kept in the
  // database, not in memory, so several app processes share one limit.
  await q.createTable("rate_limits", {
    bucket: { type: DataTypes.STRING(40), allowNull: false, primaryKey: true },
    key_hash: { type: DataTypes.CHAR(64), allowNull: false, primaryKey: true },
    window_start: { type: DataTypes.DATE(3), allowNull: false },
    hits: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
  });
  await q.addIndex("rate_limits", ["window_start"], { name: "rate_limits_window" });
}

export async function down({ queryInterface: q }: MigrationContext): Promise<void> {
  await q.dropTable("rate_limits");
  await q.dropTable("view_links");
  await q.dropTable("saved_views");
}
