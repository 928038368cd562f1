/** Sequelize models of the core domain. The schema itself comes from migrations, never sync(). */
import {
  DataTypes,
  Model,
  type CreationOptional,
  type ForeignKey,
  type InferAttributes,
  type InferCreationAttributes,
  type Sequelize,
} from 'sequelize';
import type { BoxKind, DefrostType, Role, SaturationMethod, UnitSystemPref, ValveType } from '../../shared/domain';
import { alarmModelClasses, initAlarmModels, type AlarmModels } from './alarms';
import { GAUGE_REFERENCES, type GaugeReference } from '../../shared/schemas/boxes';
import { initRuleOverrideModels, ruleOverrideModelClasses, type RuleOverrideModels } from './ruleOverrides';
import { foodLogModelClasses, initFoodLogModels, type FoodLogModels } from './foodLog';
import { initRecordModels, recordModelClasses, type RecordModels } from './records';

const id = { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true };
const ts = { createdAt: DataTypes.DATE(3), updatedAt: DataTypes.DATE(3) };
const str = (n: number, allowNull = false) => ({ type: DataTypes.STRING(n), allowNull });
// A function, not a shared object: Model.init writes `field` into each attribute object, so one
// object shared by several attributes would map them all to the first column name.
const dbl = () => ({ type: DataTypes.DOUBLE, allowNull: false });

export class Customer extends Model<InferAttributes<Customer>, InferCreationAttributes<Customer>> {
  declare id: CreationOptional<number>;
  declare name: string;
  declare contactName: string | null;
  declare contactEmail: string | null;
  declare contactPhone: string | null;
  declare notes: string | null;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

export class Site extends Model<InferAttributes<Site>, InferCreationAttributes<Site>> {
  declare id: CreationOptional<number>;
  declare customerId: ForeignKey<number>;
  declare name: string;
  declare address: string | null;
  declare timeZone: string;
  /** Metres above sea level. */
  declare elevationM: number;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

export class Box extends Model<InferAttributes<Box>, InferCreationAttributes<Box>> {
  declare id: CreationOptional<number>;
  declare siteId: ForeignKey<number>;
  declare customerId: ForeignKey<number>;
  declare name: string;
  declare kind: BoxKind;
  declare setpointC: number;
  declare differentialK: number;
  declare highLimitC: number;
  declare lowLimitC: number;
  declare alarmDelayMin: number;
  declare doorAlarmDelayMin: number;
  declare refrigerant: string;
  declare valveType: ValveType;
  declare saturationMethod: SaturationMethod;
  declare superheatTargetK: number;
  declare defrostType: DefrostType;
  declare defrostIntervalH: number;
  declare defrostMaxMin: number;
  declare defrostTerminationC: number;
  declare dripMin: number;
  declare fanDelayMin: number;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

export class Controller extends Model<InferAttributes<Controller>, InferCreationAttributes<Controller>> {
  declare id: CreationOptional<number>;
  declare boxId: ForeignKey<number>;
  declare serial: string;
  declare secretHash: string;
  declare valveFullSteps: number;
  declare firmware: string | null;
  /** What the suction transducer reads against (migration 0008). */
  declare gaugeReference: CreationOptional<GaugeReference>;
  declare lastSeenAt: Date | null;
  declare online: CreationOptional<boolean>;
  declare disabled: CreationOptional<boolean>;
  declare secretRotatedAt: Date | null;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

export class User extends Model<InferAttributes<User>, InferCreationAttributes<User>> {
  declare id: CreationOptional<number>;
  declare email: string;
  declare name: string;
  declare passwordHash: string | null;
  declare role: Role;
  declare customerId: number | null;
  declare unitSystem: CreationOptional<UnitSystemPref>;
  declare disabled: CreationOptional<boolean>;
  declare inviteTokenHash: string | null;
  declare inviteExpiresAt: Date | null;
  declare invitedAt: Date | null;
  declare lastLoginAt: Date | null;
  declare failedLogins: CreationOptional<number>;
  declare lockedUntil: Date | null;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

export class AuditEntry extends Model<InferAttributes<AuditEntry>, InferCreationAttributes<AuditEntry>> {
  declare id: CreationOptional<number>;
  declare at: Date;
  declare userId: number | null;
  declare action: string;
  declare entityType: string;
  declare entityId: string | null;
  declare customerId: number | null;
  declare detail: string | null;
  declare requestId: string | null;
}

export class SettingsChange extends Model<InferAttributes<SettingsChange>, InferCreationAttributes<SettingsChange>> {
  declare id: string;
  declare boxId: number;
  /** JSON of the requested ConfigSetPayload (without id). */
  declare requested: string;
  declare applied: string | null;
  declare state: 'pending' | 'applied' | 'rejected' | 'timed-out';
  declare overrideReason: string | null;
  declare requestedBy: number;
  declare requestedAt: Date;
  declare resolvedAt: Date | null;
  declare error: string | null;
}

export interface Models extends AlarmModels, RuleOverrideModels, FoodLogModels, RecordModels {
  Customer: typeof Customer;
  Site: typeof Site;
  Box: typeof Box;
  Controller: typeof Controller;
  User: typeof User;
  AuditEntry: typeof AuditEntry;
  SettingsChange: typeof SettingsChange;
}

/**
 * Binds a fresh subclass of every model to a Sequelize instance and declares the associations.
 * Subclasses keep two instances in one process (tests, tools) from re-binding each other's models.
 */
export function initModels(sequelize: Sequelize): Models {
  const m: Models = {
    Customer: class extends Customer {},
    Site: class extends Site {},
    Box: class extends Box {},
    Controller: class extends Controller {},
    User: class extends User {},
    AuditEntry: class extends AuditEntry {},
    SettingsChange: class extends SettingsChange {},
    ...alarmModelClasses(),
    ...ruleOverrideModelClasses(),
    ...foodLogModelClasses(),
    ...recordModelClasses(),
  };
  initInto(sequelize, m);
  initAlarmModels(sequelize, m);
  initRuleOverrideModels(sequelize, m);
  initFoodLogModels(sequelize, m);
  initRecordModels(sequelize, m);
  return m;
}

function initInto(sequelize: Sequelize, m: Models): void {
  const { Customer, Site, Box, Controller, User, AuditEntry, SettingsChange } = m;
  Customer.init(
    {
      id,
      name: str(120),
      contactName: str(120, true),
      contactEmail: str(190, true),
      contactPhone: str(40, true),
      notes: { type: DataTypes.TEXT, allowNull: true },
      ...ts,
    },
    { sequelize, tableName: 'customers', modelName: 'Customer' },
  );
  Site.init(
    { id, name: str(120), address: str(300, true), timeZone: str(64), elevationM: dbl(), ...ts },
    { sequelize, tableName: 'sites', modelName: 'Site' },
  );
  Box.init(
    {
      id,
      name: str(80),
      kind: { type: DataTypes.ENUM('cooler', 'freezer'), allowNull: false },
      setpointC: dbl(),
      differentialK: dbl(),
      highLimitC: dbl(),
      lowLimitC: dbl(),
      alarmDelayMin: { type: DataTypes.INTEGER, allowNull: false },
      doorAlarmDelayMin: { type: DataTypes.INTEGER, allowNull: false },
      refrigerant: str(16),
      valveType: { type: DataTypes.ENUM('eev', 'txv'), allowNull: false },
      saturationMethod: { type: DataTypes.ENUM('pressure', 'coil-thermistor'), allowNull: false },
      superheatTargetK: dbl(),
      defrostType: { type: DataTypes.ENUM('off-cycle', 'electric', 'hot-gas'), allowNull: false },
      defrostIntervalH: dbl(),
      defrostMaxMin: dbl(),
      defrostTerminationC: dbl(),
      dripMin: dbl(),
      fanDelayMin: dbl(),
      ...ts,
    },
    { sequelize, tableName: 'boxes', modelName: 'Box' },
  );
  Controller.init(
    {
      id,
      serial: str(40),
      secretHash: str(100),
      valveFullSteps: { type: DataTypes.INTEGER, allowNull: false },
      firmware: str(40, true),
      gaugeReference: { type: DataTypes.ENUM(...GAUGE_REFERENCES), allowNull: false, defaultValue: 'vented-gauge' },
      lastSeenAt: { type: DataTypes.DATE(3), allowNull: true },
      online: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
      disabled: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
      secretRotatedAt: { type: DataTypes.DATE(3), allowNull: true },
      ...ts,
    },
    { sequelize, tableName: 'controllers', modelName: 'Controller' },
  );
  User.init(
    {
      id,
      email: str(190),
      name: str(120),
      passwordHash: str(100, true),
      role: { type: DataTypes.ENUM('admin', 'technician', 'manager'), allowNull: false },
      customerId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
      unitSystem: { type: DataTypes.ENUM('imperial', 'metric-bar', 'metric-kpa'), allowNull: false, defaultValue: 'imperial' },
      disabled: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
      inviteTokenHash: { type: DataTypes.CHAR(64), allowNull: true },
      inviteExpiresAt: { type: DataTypes.DATE(3), allowNull: true },
      invitedAt: { type: DataTypes.DATE(3), allowNull: true },
      lastLoginAt: { type: DataTypes.DATE(3), allowNull: true },
      failedLogins: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
      lockedUntil: { type: DataTypes.DATE(3), allowNull: true },
      ...ts,
    },
    { sequelize, tableName: 'users', modelName: 'User' },
  );
  AuditEntry.init(
    {
      id: { type: DataTypes.BIGINT.UNSIGNED, autoIncrement: true, primaryKey: true },
      at: { type: DataTypes.DATE(3), allowNull: false },
      userId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
      action: str(64),
      entityType: str(32),
      entityId: str(64, true),
      customerId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
      detail: { type: DataTypes.TEXT('long'), allowNull: true },
      requestId: str(64, true),
    },
    { sequelize, tableName: 'audit_entries', modelName: 'AuditEntry', timestamps: false },
  );

  SettingsChange.init(
    {
      id: { type: DataTypes.CHAR(36), primaryKey: true },
      boxId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      requested: { type: DataTypes.TEXT('long'), allowNull: false },
      applied: { type: DataTypes.TEXT('long'), allowNull: true },
      state: { type: DataTypes.ENUM('pending', 'applied', 'rejected', 'timed-out'), allowNull: false },
      overrideReason: str(500, true),
      requestedBy: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      requestedAt: { type: DataTypes.DATE(3), allowNull: false },
      resolvedAt: { type: DataTypes.DATE(3), allowNull: true },
      error: str(200, true),
    },
    { sequelize, tableName: 'settings_changes', modelName: 'SettingsChange', timestamps: false },
  );

  Customer.hasMany(Site, { foreignKey: 'customerId', as: 'sites' });
  Site.belongsTo(Customer, { foreignKey: 'customerId', as: 'customer' });
  Site.hasMany(Box, { foreignKey: 'siteId', as: 'boxes' });
  Box.belongsTo(Site, { foreignKey: 'siteId', as: 'site' });
  Box.belongsTo(Customer, { foreignKey: 'customerId', as: 'customer' });
  Box.hasOne(Controller, { foreignKey: 'boxId', as: 'controller' });
  Controller.belongsTo(Box, { foreignKey: 'boxId', as: 'box' });
  User.belongsTo(Customer, { foreignKey: 'customerId', as: 'customer' });
}
