/** Sequelize model of per-box alarm rule overrides (table box_rule_overrides, migration 0007). */
import { DataTypes, Model, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';
import { ALARM_PRIORITIES, ALARM_RULES, type AlarmPriority, type AlarmRuleId } from '../../shared/alarms/types';

/** One box's override of one rule; a null field keeps the rule's default for the box. */
export class BoxRuleOverride extends Model<InferAttributes<BoxRuleOverride>, InferCreationAttributes<BoxRuleOverride>> {
  declare boxId: number;
  declare ruleId: AlarmRuleId;
  declare enabled: boolean | null;
  /** In the rule's own unit (°C limits, K superheat, minutes, counts). */
  declare threshold: number | null;
  declare delayMin: number | null;
  declare clearDelayMin: number | null;
  /** In the threshold's unit (K for temperatures). */
  declare deadband: number | null;
  declare priority: AlarmPriority | null;
  declare updatedBy: number | null;
  declare updatedAt: Date;
}

export interface RuleOverrideModels {
  BoxRuleOverride: typeof BoxRuleOverride;
}

/** A fresh subclass of the override model (see initModels in ./index.ts for why subclasses). */
export function ruleOverrideModelClasses(): RuleOverrideModels {
  return { BoxRuleOverride: class extends BoxRuleOverride {} };
}

/** Binds the override model to a Sequelize instance. */
export function initRuleOverrideModels(sequelize: Sequelize, m: RuleOverrideModels): void {
  const dblNull = () => ({ type: DataTypes.DOUBLE, allowNull: true });
  m.BoxRuleOverride.init(
    {
      boxId: { type: DataTypes.INTEGER.UNSIGNED, primaryKey: true },
      ruleId: { type: DataTypes.ENUM(...ALARM_RULES), primaryKey: true },
      enabled: { type: DataTypes.BOOLEAN, allowNull: true },
      threshold: dblNull(),
      delayMin: dblNull(),
      clearDelayMin: dblNull(),
      deadband: dblNull(),
      priority: { type: DataTypes.ENUM(...ALARM_PRIORITIES), allowNull: true },
      updatedBy: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
      updatedAt: { type: DataTypes.DATE(3), allowNull: false },
    },
    { sequelize, tableName: 'box_rule_overrides', modelName: 'BoxRuleOverride', timestamps: false },
  );
}
