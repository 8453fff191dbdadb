// The acquisition check's limits per lab (lib/imaging/acquisition-check.ts DEFAULT_THRESHOLDS when
// null). Verdicts themselves are computed on read from the stored statistics, so they follow every
// change of metadata, detector profile or limits without a stored copy going stale.
import { DataTypes } from "sequelize";
import type { MigrationContext } from "@/lib/server/migrate";

export async function up({ queryInterface: q }: MigrationContext): Promise<void> {
  await q.addColumn("labs", "check_thresholds", { type: DataTypes.JSON, allowNull: true });
}

export async function down({ queryInterface: q }: MigrationContext): Promise<void> {
  await q.removeColumn("labs", "check_thresholds");
}
