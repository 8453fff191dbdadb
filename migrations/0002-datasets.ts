// Datasets (immutable originals in the blob store), their planes with per-plane statistics, per-channel
// statistics over the whole stack, resumable uploads with their parts, and ingest jobs.
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
const double = { type: DataTypes.DOUBLE, allowNull: true };
// Statistics of one plane or of one channel over the stack; percentiles are exact (type 7).
const stats = {
  min: double,
  max: double,
  mean: double,
  sd: double,
  count_at_ceiling: { type: DataTypes.BIGINT.UNSIGNED, allowNull: true },
  count_at_zero: { type: DataTypes.BIGINT.UNSIGNED, allowNull: true },
  percentiles: { type: DataTypes.JSON, allowNull: true },
  histogram: { type: DataTypes.JSON, allowNull: true },
};

export async function up({ queryInterface: q }: MigrationContext): Promise<void> {
  await q.createTable("datasets", {
    id,
    lab_id: fk("labs", "CASCADE"),
    uploaded_by_id: fk("users", "SET NULL"),
    title: { type: DataTypes.STRING(200), allowNull: false },
    original_name: { type: DataTypes.STRING(255), allowNull: false },
    status: { type: DataTypes.ENUM("queued", "ingesting", "ready", "failed"), allowNull: false },
    failure_reason: { type: DataTypes.TEXT, allowNull: true },
    progress_done: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 0 },
    progress_total: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 0 },
    size_bytes: { type: DataTypes.BIGINT.UNSIGNED, allowNull: false },
    sha256: { type: DataTypes.CHAR(64), allowNull: false },
    blob_key: { type: DataTypes.STRING(255), allowNull: false, unique: true },
    thumbnail_key: { type: DataTypes.STRING(255), allowNull: true },
    little_endian: { type: DataTypes.BOOLEAN, allowNull: true },
    big_tiff: { type: DataTypes.BOOLEAN, allowNull: true },
    width: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
    height: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
    bits_per_sample: { type: DataTypes.TINYINT.UNSIGNED, allowNull: true },
    sample_format: { type: DataTypes.TINYINT.UNSIGNED, allowNull: true },
    compression: { type: DataTypes.STRING(40), allowNull: true },
    lossy: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
    plane_count: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
    size_c: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
    size_z: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
    size_t: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
    dimension_order: { type: DataTypes.STRING(5), allowNull: true },
    dimensions_from: { type: DataTypes.ENUM("ome-xml", "form"), allowNull: true },
    significant_bits: { type: DataTypes.TINYINT.UNSIGNED, allowNull: true },
    ceiling: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
    physical_size_x: double,
    physical_size_y: double,
    physical_size_z: double,
    time_increment: double,
    channels: { type: DataTypes.JSON, allowNull: true },
    acquisition: { type: DataTypes.JSON, allowNull: true },
    experiment: { type: DataTypes.STRING(200), allowNull: true },
    sample: { type: DataTypes.STRING(200), allowNull: true },
    treatment: { type: DataTypes.STRING(200), allowNull: true },
    notes: { type: DataTypes.TEXT, allowNull: true },
    tags: { type: DataTypes.JSON, allowNull: true },
    deleted_at: { type: DataTypes.DATE, allowNull: true },
    ...stamps,
  });
  await q.addIndex("datasets", ["lab_id", "deleted_at", "created_at"], { name: "datasets_lab_listing" });
  await q.addIndex("datasets", ["lab_id", "status"], { name: "datasets_lab_status" });

  await q.createTable("planes", {
    id: { type: DataTypes.BIGINT.UNSIGNED, autoIncrement: true, primaryKey: true, allowNull: false },
    dataset_id: fk("datasets", "CASCADE"),
    ifd_index: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
    ifd_offset: { type: DataTypes.BIGINT.UNSIGNED, allowNull: false },
    c: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
    z: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
    t: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
    ...stats,
  });
  await q.addIndex("planes", ["dataset_id", "ifd_index"], { unique: true, name: "planes_dataset_ifd" });
  await q.addIndex("planes", ["dataset_id", "c", "z", "t"], { name: "planes_dataset_czt" });

  await q.createTable("channel_stats", {
    id,
    dataset_id: fk("datasets", "CASCADE"),
    c: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
    ...stats,
  });
  await q.addIndex("channel_stats", ["dataset_id", "c"], { unique: true, name: "channel_stats_dataset_c" });

  await q.createTable("uploads", {
    id: { type: DataTypes.CHAR(36), primaryKey: true, allowNull: false },
    lab_id: fk("labs", "CASCADE"),
    user_id: fk("users", "CASCADE"),
    file_name: { type: DataTypes.STRING(255), allowNull: false },
    size_bytes: { type: DataTypes.BIGINT.UNSIGNED, allowNull: false },
    part_size: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
    status: { type: DataTypes.ENUM("open", "completing", "completed", "failed", "cancelled"), allowNull: false },
    failure_reason: { type: DataTypes.TEXT, allowNull: true },
    dimensions: { type: DataTypes.JSON, allowNull: true },
    dataset_id: fk("datasets", "SET NULL"),
    ...stamps,
  });
  await q.addIndex("uploads", ["lab_id", "user_id", "status"], { name: "uploads_lab_user_status" });

  await q.createTable("upload_parts", {
    id: { type: DataTypes.BIGINT.UNSIGNED, autoIncrement: true, primaryKey: true, allowNull: false },
    upload_id: { type: DataTypes.CHAR(36), allowNull: false, references: { model: "uploads", key: "id" }, onDelete: "CASCADE" },
    part_number: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
    size_bytes: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
    sha256: { type: DataTypes.CHAR(64), allowNull: false },
    created_at: { type: DataTypes.DATE, allowNull: false },
  });
  await q.addIndex("upload_parts", ["upload_id", "part_number"], { unique: true, name: "upload_parts_upload_part" });

  await q.createTable("jobs", {
    id,
    kind: { type: DataTypes.STRING(40), allowNull: false },
    dataset_id: fk("datasets", "CASCADE"),
    status: { type: DataTypes.ENUM("queued", "running", "done", "failed"), allowNull: false },
    attempts: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 0 },
    locked_by: { type: DataTypes.STRING(100), allowNull: true },
    heartbeat_at: { type: DataTypes.DATE, allowNull: true },
    error: { type: DataTypes.TEXT, allowNull: true },
    ...stamps,
  });
  await q.addIndex("jobs", ["status", "id"], { name: "jobs_status" });
}

export async function down({ queryInterface: q }: MigrationContext): Promise<void> {
  for (const table of ["jobs", "upload_parts", "uploads", "channel_stats", "planes", "datasets"]) {
    await q.dropTable(table);
  }
}
