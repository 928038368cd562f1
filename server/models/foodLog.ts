/** Sequelize models of the food-safety temperature log (tables food_log_entries and food_log_site_settings, migration 0010). */
import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';
import { FOOD_LOG_ENTRY_KINDS, type FoodLogEntryKind } from '../../shared/schemas/foodLog';

/** One entry of a box's log on a site-local day; never updated or deleted once the day is signed. */
export class FoodLogEntry extends Model<InferAttributes<FoodLogEntry>, InferCreationAttributes<FoodLogEntry>> {
  declare id: CreationOptional<number>;
  declare boxId: number;
  declare customerId: number;
  /** Site-local day, `YYYY-MM-DD`. */
  declare day: string;
  declare kind: FoodLogEntryKind;
  declare text: string;
  declare byUserId: number | null;
  declare byName: string;
  /** When the action was taken. */
  declare at: Date;
  declare recordedAt: Date;
  declare refersToId: number | null;
  /** Product temperature by probe thermometer, °C. */
  declare productProbeC: number | null;
  declare excursionStartAt: Date | null;
}

/** A site's reading plan: a reading every foodLogIntervalH hours of local time. */
export class FoodLogSiteSetting extends Model<InferAttributes<FoodLogSiteSetting>, InferCreationAttributes<FoodLogSiteSetting>> {
  declare siteId: number;
  declare foodLogIntervalH: number;
  declare updatedBy: number | null;
  declare updatedAt: Date;
}

export interface FoodLogModels {
  FoodLogEntry: typeof FoodLogEntry;
  FoodLogSiteSetting: typeof FoodLogSiteSetting;
}

/** Fresh subclasses of the food-log models (see initModels in ./index.ts for why subclasses). */
export function foodLogModelClasses(): FoodLogModels {
  return { FoodLogEntry: class extends FoodLogEntry {}, FoodLogSiteSetting: class extends FoodLogSiteSetting {} };
}

/** Binds the food-log models to a Sequelize instance. */
export function initFoodLogModels(sequelize: Sequelize, m: FoodLogModels): void {
  m.FoodLogEntry.init(
    {
      id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
      boxId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      customerId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      day: { type: DataTypes.DATEONLY, allowNull: false },
      kind: { type: DataTypes.ENUM(...FOOD_LOG_ENTRY_KINDS), allowNull: false },
      text: { type: DataTypes.STRING(2000), allowNull: false },
      byUserId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
      byName: { type: DataTypes.STRING(120), allowNull: false },
      at: { type: DataTypes.DATE(3), allowNull: false },
      recordedAt: { type: DataTypes.DATE(3), allowNull: false },
      refersToId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
      productProbeC: { type: DataTypes.DOUBLE, allowNull: true },
      excursionStartAt: { type: DataTypes.DATE(3), allowNull: true },
    },
    { sequelize, tableName: 'food_log_entries', modelName: 'FoodLogEntry', timestamps: false, underscored: true },
  );
  m.FoodLogSiteSetting.init(
    {
      siteId: { type: DataTypes.INTEGER.UNSIGNED, primaryKey: true },
      foodLogIntervalH: { type: DataTypes.TINYINT.UNSIGNED, allowNull: false },
      updatedBy: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
      updatedAt: { type: DataTypes.DATE(3), allowNull: false },
    },
    { sequelize, tableName: 'food_log_site_settings', modelName: 'FoodLogSiteSetting', timestamps: false, underscored: true },
  );
}
