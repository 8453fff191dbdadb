import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from "sequelize";

export type JobStatus = "queued" | "running" | "done" | "failed";

/** Background work (ingest) claimed by worker processes with SELECT … FOR UPDATE SKIP LOCKED. */
export class Job extends Model<InferAttributes<Job>, InferCreationAttributes<Job>> {
  declare id: CreationOptional<number>;
  declare kind: "ingest";
  declare datasetId: number;
  declare status: JobStatus;
  declare attempts: CreationOptional<number>;
  declare lockedBy: CreationOptional<string | null>;
  /** Refreshed while a worker runs the job; a stale heartbeat means the worker died. */
  declare heartbeatAt: CreationOptional<Date | null>;
  declare error: CreationOptional<string | null>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize) {
    Job.init(
      {
        id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
        kind: { type: DataTypes.STRING(40), allowNull: false },
        datasetId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        status: { type: DataTypes.ENUM("queued", "running", "done", "failed"), allowNull: false },
        attempts: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 0 },
        lockedBy: { type: DataTypes.STRING(100), allowNull: true },
        heartbeatAt: { type: DataTypes.DATE, allowNull: true },
        error: { type: DataTypes.TEXT, allowNull: true },
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, modelName: "Job", tableName: "jobs", underscored: true },
    );
  }
}
