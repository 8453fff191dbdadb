// Detector profiles: a lab's cameras as numbers (bit depth, offset, system gain K, read noise,
// saturation capacity), typed from a data sheet or measured by photon transfer (EMVA 1288), and the
// profile a dataset was taken with. K is stored in DN per electron only, as EMVA 1288 defines it;
// the API accepts e⁻ per DN too and converts.
import { DataTypes } from "sequelize";
import type { MigrationContext } from "@/lib/server/migrate";

const FK_NAME = "datasets_detector_profile_fk";

export async function up({ queryInterface: q }: MigrationContext): Promise<void> {
  await q.createTable("detector_profiles", {
    id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true, allowNull: false },
    lab_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, references: { model: "labs", key: "id" }, onDelete: "CASCADE", onUpdate: "CASCADE" },
    name: { type: DataTypes.STRING(120), allowNull: false },
    bit_depth: { type: DataTypes.TINYINT.UNSIGNED, allowNull: false },
    offset_dn: { type: DataTypes.DOUBLE, allowNull: false },
    gain_dn_per_e: { type: DataTypes.DOUBLE, allowNull: false },
    // Not every data sheet gives these; null = not known.
    read_noise_e: { type: DataTypes.DOUBLE, allowNull: true },
    saturation_capacity_e: { type: DataTypes.DOUBLE, allowNull: true },
    notes: { type: DataTypes.TEXT, allowNull: true },
    source: { type: DataTypes.ENUM("manual", "measured"), allowNull: false },
    // A measured profile keeps the dataset it came from (the link goes when that dataset is purged)
    // and the fit summary, so the numbers can be traced after the dataset is gone.
    source_dataset_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true, references: { model: "datasets", key: "id" }, onDelete: "SET NULL", onUpdate: "CASCADE" },
    fit: { type: DataTypes.JSON, allowNull: true },
    created_by_id: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true, references: { model: "users", key: "id" }, onDelete: "SET NULL", onUpdate: "CASCADE" },
    version: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 1 },
    created_at: { type: DataTypes.DATE, allowNull: false },
    updated_at: { type: DataTypes.DATE, allowNull: false },
  });
  // Names are unique per lab (compared by the table's collation: case and accents ignored).
  await q.addIndex("detector_profiles", ["lab_id", "name"], { unique: true, name: "detector_profiles_lab_name" });

  await q.addColumn("datasets", "detector_profile_id", { type: DataTypes.INTEGER.UNSIGNED, allowNull: true });
  // Deleting a profile leaves its datasets without one, rather than deleting them.
  await q.addConstraint("datasets", {
    type: "foreign key",
    name: FK_NAME,
    fields: ["detector_profile_id"],
    references: { table: "detector_profiles", field: "id" },
    onDelete: "SET NULL",
    onUpdate: "CASCADE",
  });
}

export async function down({ queryInterface: q, sequelize }: MigrationContext): Promise<void> {
  // MariaDB commits each DDL statement: every step checks first, so running down() again after a
  // half-way failure finishes the job.
  const [constraints] = (await sequelize.query(
    "SELECT CONSTRAINT_NAME FROM information_schema.TABLE_CONSTRAINTS WHERE TABLE_SCHEMA = DATABASE() AND TABLE_NAME = 'datasets' AND CONSTRAINT_NAME = ?",
    { replacements: [FK_NAME] },
  )) as [unknown[], unknown];
  if (constraints.length) await q.removeConstraint("datasets", FK_NAME);
  const columns = await q.describeTable("datasets");
  if ("detector_profile_id" in columns) await q.removeColumn("datasets", "detector_profile_id");
  await q.dropTable("detector_profiles");
}
