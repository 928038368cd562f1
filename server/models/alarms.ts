/** Sequelize models of alarms, notifications, engine snapshots, maintenance, on-call rotations and escalation policies. */
import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';
import { ALARM_ACTIONS, ALARM_PRIORITIES, ALARM_RULES, ALARM_STATES, type AlarmAction, type AlarmPriority, type AlarmRuleId, type AlarmState } from '../../shared/alarms/types';

const uint = (allowNull = false) => ({ type: DataTypes.INTEGER.UNSIGNED, allowNull });
const when = (allowNull = false) => ({ type: DataTypes.DATE(3), allowNull });
const str = (n: number, allowNull = false) => ({ type: DataTypes.STRING(n), allowNull });
const ts = { createdAt: DataTypes.DATE(3), updatedAt: DataTypes.DATE(3) };

export class Alarm extends Model<InferAttributes<Alarm>, InferCreationAttributes<Alarm>> {
  declare id: CreationOptional<number>;
  declare boxId: number;
  declare siteId: number;
  declare customerId: number;
  declare ruleId: AlarmRuleId;
  declare priority: AlarmPriority;
  declare state: AlarmState;
  declare conditionActive: boolean;
  declare value: number | null;
  declare message: string;
  declare raisedAt: Date;
  declare clearedAt: Date | null;
  declare acknowledgedAt: Date | null;
  declare acknowledgedBy: number | null;
  declare shelvedUntil: Date | null;
  declare reopenCount: CreationOptional<number>;
  /** Last escalation step notified; -1 before the first notice. */
  declare escalationStep: CreationOptional<number>;
  declare nextEscalationAt: Date | null;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

export class AlarmTransition extends Model<InferAttributes<AlarmTransition>, InferCreationAttributes<AlarmTransition>> {
  declare id: CreationOptional<number>;
  declare alarmId: number;
  declare at: Date;
  declare action: AlarmAction;
  declare fromState: AlarmState;
  declare toState: AlarmState;
  declare userId: number | null;
  declare note: string | null;
}

export class AlarmNotification extends Model<InferAttributes<AlarmNotification>, InferCreationAttributes<AlarmNotification>> {
  declare id: CreationOptional<number>;
  declare alarmId: number;
  declare at: Date;
  declare channel: 'email' | 'push';
  declare recipient: string;
  declare userId: number | null;
  declare status: 'sent' | 'failed';
  declare error: string | null;
  declare level: number;
}

export class AlarmAckToken extends Model<InferAttributes<AlarmAckToken>, InferCreationAttributes<AlarmAckToken>> {
  declare tokenHash: string;
  declare alarmId: number;
  declare userId: number | null;
  declare expiresAt: Date;
  declare usedAt: Date | null;
  declare usedBy: number | null;
}

export class BoxEngineSnapshot extends Model<InferAttributes<BoxEngineSnapshot>, InferCreationAttributes<BoxEngineSnapshot>> {
  declare boxId: number;
  declare snapshot: string;
  declare savedAt: Date;
}

export class BoxMaintenance extends Model<InferAttributes<BoxMaintenance>, InferCreationAttributes<BoxMaintenance>> {
  declare boxId: number;
  declare untilAt: Date;
  declare note: string | null;
  declare setBy: number | null;
  declare setAt: Date;
}

export class OncallRotation extends Model<InferAttributes<OncallRotation>, InferCreationAttributes<OncallRotation>> {
  declare id: CreationOptional<number>;
  declare name: string;
  declare timeZone: string;
  /** OncallShift[] as JSON. */
  declare shifts: string;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

export class OncallOverride extends Model<InferAttributes<OncallOverride>, InferCreationAttributes<OncallOverride>> {
  declare id: CreationOptional<number>;
  declare rotationId: number;
  declare userId: number;
  declare startsAt: Date;
  declare endsAt: Date;
  declare note: string | null;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

export class EscalationPolicy extends Model<InferAttributes<EscalationPolicy>, InferCreationAttributes<EscalationPolicy>> {
  declare id: CreationOptional<number>;
  declare name: string;
  /** Comma list of priorities; null for the default policy. */
  declare priorities: string | null;
  declare escalateAfterMin: number;
  /** EscalationTarget[][] as JSON. */
  declare levels: string;
  declare repeatHighest: boolean;
  /** QuietHours JSON or null. */
  declare quietHours: string | null;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

export interface AlarmModels {
  Alarm: typeof Alarm;
  AlarmTransition: typeof AlarmTransition;
  AlarmNotification: typeof AlarmNotification;
  AlarmAckToken: typeof AlarmAckToken;
  BoxEngineSnapshot: typeof BoxEngineSnapshot;
  BoxMaintenance: typeof BoxMaintenance;
  OncallRotation: typeof OncallRotation;
  OncallOverride: typeof OncallOverride;
  EscalationPolicy: typeof EscalationPolicy;
}

/** Fresh subclasses of the alarm models (see initModels in ./index.ts for why subclasses). */
export function alarmModelClasses(): AlarmModels {
  return {
    Alarm: class extends Alarm {},
    AlarmTransition: class extends AlarmTransition {},
    AlarmNotification: class extends AlarmNotification {},
    AlarmAckToken: class extends AlarmAckToken {},
    BoxEngineSnapshot: class extends BoxEngineSnapshot {},
    BoxMaintenance: class extends BoxMaintenance {},
    OncallRotation: class extends OncallRotation {},
    OncallOverride: class extends OncallOverride {},
    EscalationPolicy: class extends EscalationPolicy {},
  };
}

/** Binds the alarm models to a Sequelize instance. */
export function initAlarmModels(sequelize: Sequelize, m: AlarmModels): void {
  m.Alarm.init(
    {
      id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
      boxId: uint(),
      siteId: uint(),
      customerId: uint(),
      ruleId: { type: DataTypes.ENUM(...ALARM_RULES), allowNull: false },
      priority: { type: DataTypes.ENUM(...ALARM_PRIORITIES), allowNull: false },
      state: { type: DataTypes.ENUM(...ALARM_STATES), allowNull: false },
      conditionActive: { type: DataTypes.BOOLEAN, allowNull: false },
      value: { type: DataTypes.DOUBLE, allowNull: true },
      message: str(500),
      raisedAt: when(),
      clearedAt: when(true),
      acknowledgedAt: when(true),
      acknowledgedBy: uint(true),
      shelvedUntil: when(true),
      reopenCount: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 0 },
      escalationStep: { type: DataTypes.INTEGER, allowNull: false, defaultValue: -1 },
      nextEscalationAt: when(true),
      ...ts,
    },
    { sequelize, tableName: 'alarms', modelName: 'Alarm' },
  );
  m.AlarmTransition.init(
    {
      id: { type: DataTypes.BIGINT.UNSIGNED, autoIncrement: true, primaryKey: true },
      alarmId: uint(),
      at: when(),
      action: { type: DataTypes.ENUM(...ALARM_ACTIONS), allowNull: false },
      fromState: { type: DataTypes.ENUM(...ALARM_STATES), allowNull: false },
      toState: { type: DataTypes.ENUM(...ALARM_STATES), allowNull: false },
      userId: uint(true),
      note: str(500, true),
    },
    { sequelize, tableName: 'alarm_transitions', modelName: 'AlarmTransition', timestamps: false },
  );
  m.AlarmNotification.init(
    {
      id: { type: DataTypes.BIGINT.UNSIGNED, autoIncrement: true, primaryKey: true },
      alarmId: uint(),
      at: when(),
      channel: { type: DataTypes.ENUM('email', 'push'), allowNull: false },
      recipient: str(190),
      userId: uint(true),
      status: { type: DataTypes.ENUM('sent', 'failed'), allowNull: false },
      error: str(300, true),
      level: uint(),
    },
    { sequelize, tableName: 'alarm_notifications', modelName: 'AlarmNotification', timestamps: false },
  );
  m.AlarmAckToken.init(
    { tokenHash: { type: DataTypes.CHAR(64), primaryKey: true }, alarmId: uint(), userId: uint(true), expiresAt: when(), usedAt: when(true), usedBy: uint(true) },
    { sequelize, tableName: 'alarm_ack_tokens', modelName: 'AlarmAckToken', timestamps: false },
  );
  m.BoxEngineSnapshot.init(
    { boxId: { type: DataTypes.INTEGER.UNSIGNED, primaryKey: true }, snapshot: { type: DataTypes.TEXT('long'), allowNull: false }, savedAt: when() },
    { sequelize, tableName: 'box_engine_snapshots', modelName: 'BoxEngineSnapshot', timestamps: false },
  );
  m.BoxMaintenance.init(
    { boxId: { type: DataTypes.INTEGER.UNSIGNED, primaryKey: true }, untilAt: when(), note: str(200, true), setBy: uint(true), setAt: when() },
    { sequelize, tableName: 'box_maintenance', modelName: 'BoxMaintenance', timestamps: false },
  );
  m.OncallRotation.init(
    { id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true }, name: str(120), timeZone: str(64), shifts: { type: DataTypes.TEXT('long'), allowNull: false }, ...ts },
    { sequelize, tableName: 'oncall_rotations', modelName: 'OncallRotation' },
  );
  m.OncallOverride.init(
    { id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true }, rotationId: uint(), userId: uint(), startsAt: when(), endsAt: when(), note: str(200, true), ...ts },
    { sequelize, tableName: 'oncall_overrides', modelName: 'OncallOverride' },
  );
  m.EscalationPolicy.init(
    {
      id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
      name: str(120),
      priorities: str(100, true),
      escalateAfterMin: { type: DataTypes.DOUBLE, allowNull: false },
      levels: { type: DataTypes.TEXT('long'), allowNull: false },
      repeatHighest: { type: DataTypes.BOOLEAN, allowNull: false },
      quietHours: { type: DataTypes.TEXT('long'), allowNull: true },
      ...ts,
    },
    { sequelize, tableName: 'escalation_policies', modelName: 'EscalationPolicy' },
  );
}
