// A password reset ends every session of the account: sessions signed in before this time are refused.
import { DataTypes } from "sequelize";
import type { MigrationContext } from "@/lib/server/migrate";

export async function up({ queryInterface: q }: MigrationContext): Promise<void> {
  // Millisecond precision: a sign-in and a reset can fall within the same second.
  await q.addColumn("users", "sessions_valid_after", { type: DataTypes.DATE(3), allowNull: true });
}

export async function down({ queryInterface: q }: MigrationContext): Promise<void> {
  await q.removeColumn("users", "sessions_valid_after");
}
