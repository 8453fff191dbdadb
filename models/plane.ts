import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from "sequelize";

/** Exact statistics of a set of raw values (one plane, or one channel over the stack). */
export interface StatColumns {
  min: number | null;
  max: number | null;
  mean: number | null;
  /** Population standard deviation (divides by N). */
  sd: number | null;
  countAtCeiling: number | null;
  countAtZero: number | null;
  /** Percent → raw value, Hyndman & Fan (1996) type 7 from the full integer histogram. */
  percentiles: Record<string, number> | null;
  /** Compact histogram: { binWidth, counts } over 0 … ceiling. */
  histogram: { binWidth: number; counts: number[] } | null;
}

/** Just the statistic columns of a summary or a row (writing planes at ingest, reading them back). */
export function statColumnsOf(s: StatColumns): StatColumns {
  return {
    min: s.min,
    max: s.max,
    mean: s.mean,
    sd: s.sd,
    countAtCeiling: s.countAtCeiling,
    countAtZero: s.countAtZero,
    percentiles: s.percentiles,
    histogram: s.histogram,
  };
}

export const statAttributes = {
  min: { type: DataTypes.DOUBLE, allowNull: true },
  max: { type: DataTypes.DOUBLE, allowNull: true },
  mean: { type: DataTypes.DOUBLE, allowNull: true },
  sd: { type: DataTypes.DOUBLE, allowNull: true },
  countAtCeiling: {
    type: DataTypes.BIGINT.UNSIGNED,
    allowNull: true,
    get(this: Model) {
      const v = this.getDataValue("countAtCeiling");
      return v == null ? null : Number(v);
    },
  },
  countAtZero: {
    type: DataTypes.BIGINT.UNSIGNED,
    allowNull: true,
    get(this: Model) {
      const v = this.getDataValue("countAtZero");
      return v == null ? null : Number(v);
    },
  },
  percentiles: { type: DataTypes.JSON, allowNull: true },
  histogram: { type: DataTypes.JSON, allowNull: true },
};

export class Plane extends Model<InferAttributes<Plane>, InferCreationAttributes<Plane>> implements StatColumns {
  declare id: CreationOptional<number>;
  declare datasetId: number;
  declare ifdIndex: number;
  /** Byte offset of this plane's IFD: the viewer opens the plane without walking the IFD chain. */
  declare ifdOffset: number;
  declare c: number;
  declare z: number;
  declare t: number;
  declare min: number | null;
  declare max: number | null;
  declare mean: number | null;
  declare sd: number | null;
  declare countAtCeiling: number | null;
  declare countAtZero: number | null;
  declare percentiles: Record<string, number> | null;
  declare histogram: { binWidth: number; counts: number[] } | null;

  static initModel(sequelize: Sequelize) {
    Plane.init(
      {
        id: { type: DataTypes.BIGINT.UNSIGNED, autoIncrement: true, primaryKey: true },
        datasetId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        ifdIndex: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        ifdOffset: {
          type: DataTypes.BIGINT.UNSIGNED,
          allowNull: false,
          get() {
            return Number(this.getDataValue("ifdOffset"));
          },
        },
        c: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        z: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        t: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        ...statAttributes,
      },
      { sequelize, modelName: "Plane", tableName: "planes", underscored: true, timestamps: false },
    );
  }
}

export class ChannelStat extends Model<InferAttributes<ChannelStat>, InferCreationAttributes<ChannelStat>> implements StatColumns {
  declare id: CreationOptional<number>;
  declare datasetId: number;
  declare c: number;
  declare min: number | null;
  declare max: number | null;
  declare mean: number | null;
  declare sd: number | null;
  declare countAtCeiling: number | null;
  declare countAtZero: number | null;
  declare percentiles: Record<string, number> | null;
  declare histogram: { binWidth: number; counts: number[] } | null;

  static initModel(sequelize: Sequelize) {
    ChannelStat.init(
      {
        id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
        datasetId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        c: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
        ...statAttributes,
      },
      { sequelize, modelName: "ChannelStat", tableName: "channel_stats", underscored: true, timestamps: false },
    );
  }
}
