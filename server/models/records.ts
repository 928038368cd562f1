/** Sequelize models of service visits, their alarms and attachments, and the refrigerant log (migration 0009). */
import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';
import { APPLIANCE_TYPES, LEAK_RATE_EXEMPTIONS, MASS_UNITS, type ApplianceType, type LeakRateExemption, type MassUnit } from '../../shared/records/leakRate';
import { ATTACHMENT_TYPES, type AttachmentType } from '../../shared/schemas/visits';

const uint = (allowNull = false) => ({ type: DataTypes.INTEGER.UNSIGNED, allowNull });
const dblNull = () => ({ type: DataTypes.DOUBLE, allowNull: true });
const when = (allowNull = false) => ({ type: DataTypes.DATE(3), allowNull });

export class ServiceVisit extends Model<InferAttributes<ServiceVisit>, InferCreationAttributes<ServiceVisit>> {
  declare id: CreationOptional<number>;
  declare customerId: number;
  declare siteId: number;
  declare boxId: number | null;
  /** YYYY-MM-DD. */
  declare visitedOn: string;
  declare technicianId: number;
  declare findings: string;
  declare workDone: string;
  /** JSON of VisitPart[]. */
  declare parts: string;
  declare timeOnSiteMin: number;
  declare status: CreationOptional<'open' | 'closed'>;
  declare closedAt: Date | null;
  declare closedBy: number | null;
  declare checkRefrigerant: string | null;
  declare checkElevationM: number | null;
  declare suctionKPaG: number | null;
  declare suctionLineC: number | null;
  declare liquidKPaG: number | null;
  declare liquidLineC: number | null;
  declare saturatedSuctionC: number | null;
  declare superheatK: number | null;
  declare saturatedLiquidC: number | null;
  declare subcoolingK: number | null;
  declare highSideState: 'subcritical' | 'supercritical' | null;
  /** JSON of string[]. */
  declare checkNotes: string | null;
  declare sightGlassClear: boolean | null;
  declare receiverLevelPercent: number | null;
  declare createdBy: number;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

export class ServiceVisitAlarm extends Model<InferAttributes<ServiceVisitAlarm>, InferCreationAttributes<ServiceVisitAlarm>> {
  declare visitId: number;
  declare alarmId: number;
}

export class VisitAttachment extends Model<InferAttributes<VisitAttachment>, InferCreationAttributes<VisitAttachment>> {
  declare id: CreationOptional<number>;
  declare visitId: number;
  declare customerId: number;
  declare contentType: AttachmentType;
  declare sizeBytes: number;
  /** Random UUID; never derived from the client's name. */
  declare storageName: string;
  declare hasThumb: boolean;
  declare fileName: string;
  declare uploadedBy: number;
  declare createdAt: Date;
}

export class RefrigerantSystem extends Model<InferAttributes<RefrigerantSystem>, InferCreationAttributes<RefrigerantSystem>> {
  declare boxId: number;
  declare customerId: number;
  declare fullChargeKg: number;
  declare applianceType: ApplianceType;
  declare fullChargeDate: string | null;
  declare updatedBy: number;
  declare updatedAt: Date;
}

export class RefrigerantEntry extends Model<InferAttributes<RefrigerantEntry>, InferCreationAttributes<RefrigerantEntry>> {
  declare id: CreationOptional<number>;
  declare boxId: number;
  declare customerId: number;
  declare kind: 'addition' | 'recovery';
  declare amountKg: number;
  declare enteredAmount: number;
  declare enteredUnit: MassUnit;
  declare occurredOn: string;
  declare refrigerant: string;
  declare technicianId: number;
  declare cylinderId: string;
  declare reason: string;
  declare exemption: LeakRateExemption | null;
  declare sameLeakAsPrevious: boolean;
  declare createdBy: number;
  declare createdAt: Date;
}

export interface RecordModels {
  ServiceVisit: typeof ServiceVisit;
  ServiceVisitAlarm: typeof ServiceVisitAlarm;
  VisitAttachment: typeof VisitAttachment;
  RefrigerantSystem: typeof RefrigerantSystem;
  RefrigerantEntry: typeof RefrigerantEntry;
}

/** Fresh subclasses of the record models (see initModels in ./index.ts for why subclasses). */
export function recordModelClasses(): RecordModels {
  return {
    ServiceVisit: class extends ServiceVisit {},
    ServiceVisitAlarm: class extends ServiceVisitAlarm {},
    VisitAttachment: class extends VisitAttachment {},
    RefrigerantSystem: class extends RefrigerantSystem {},
    RefrigerantEntry: class extends RefrigerantEntry {},
  };
}

/** Binds the record models to a Sequelize instance. */
export function initRecordModels(sequelize: Sequelize, m: RecordModels): void {
  m.ServiceVisit.init(
    {
      id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
      customerId: uint(),
      siteId: uint(),
      boxId: uint(true),
      visitedOn: { type: DataTypes.DATEONLY, allowNull: false },
      technicianId: uint(),
      findings: { type: DataTypes.TEXT, allowNull: false },
      workDone: { type: DataTypes.TEXT, allowNull: false },
      parts: { type: DataTypes.TEXT, allowNull: false },
      timeOnSiteMin: uint(),
      status: { type: DataTypes.ENUM('open', 'closed'), allowNull: false, defaultValue: 'open' },
      closedAt: when(true),
      closedBy: uint(true),
      checkRefrigerant: { type: DataTypes.STRING(16), allowNull: true },
      checkElevationM: dblNull(),
      suctionKPaG: { ...dblNull(), field: 'suction_kpa_g' },
      suctionLineC: { ...dblNull(), field: 'suction_line_c' },
      liquidKPaG: { ...dblNull(), field: 'liquid_kpa_g' },
      liquidLineC: { ...dblNull(), field: 'liquid_line_c' },
      saturatedSuctionC: { ...dblNull(), field: 'saturated_suction_c' },
      superheatK: { ...dblNull(), field: 'superheat_k' },
      saturatedLiquidC: { ...dblNull(), field: 'saturated_liquid_c' },
      subcoolingK: { ...dblNull(), field: 'subcooling_k' },
      highSideState: { type: DataTypes.ENUM('subcritical', 'supercritical'), allowNull: true },
      checkNotes: { type: DataTypes.TEXT, allowNull: true },
      sightGlassClear: { type: DataTypes.BOOLEAN, allowNull: true },
      receiverLevelPercent: dblNull(),
      createdBy: uint(),
      createdAt: DataTypes.DATE(3),
      updatedAt: DataTypes.DATE(3),
    },
    { sequelize, tableName: 'service_visits', modelName: 'ServiceVisit', underscored: true },
  );
  m.ServiceVisitAlarm.init(
    { visitId: { ...uint(), primaryKey: true }, alarmId: { ...uint(), primaryKey: true } },
    { sequelize, tableName: 'service_visit_alarms', modelName: 'ServiceVisitAlarm', timestamps: false, underscored: true },
  );
  m.VisitAttachment.init(
    {
      id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
      visitId: uint(),
      customerId: uint(),
      contentType: { type: DataTypes.ENUM(...ATTACHMENT_TYPES), allowNull: false },
      sizeBytes: uint(),
      storageName: { type: DataTypes.CHAR(36), allowNull: false },
      hasThumb: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
      fileName: { type: DataTypes.STRING(120), allowNull: false },
      uploadedBy: uint(),
      createdAt: when(),
    },
    { sequelize, tableName: 'visit_attachments', modelName: 'VisitAttachment', timestamps: false, underscored: true },
  );
  m.RefrigerantSystem.init(
    {
      boxId: { ...uint(), primaryKey: true },
      customerId: uint(),
      fullChargeKg: { type: DataTypes.DOUBLE, allowNull: false },
      applianceType: { type: DataTypes.ENUM(...APPLIANCE_TYPES), allowNull: false },
      fullChargeDate: { type: DataTypes.DATEONLY, allowNull: true },
      updatedBy: uint(),
      updatedAt: when(),
    },
    { sequelize, tableName: 'refrigerant_systems', modelName: 'RefrigerantSystem', timestamps: false, underscored: true },
  );
  m.RefrigerantEntry.init(
    {
      id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
      boxId: uint(),
      customerId: uint(),
      kind: { type: DataTypes.ENUM('addition', 'recovery'), allowNull: false },
      amountKg: { type: DataTypes.DOUBLE, allowNull: false },
      enteredAmount: { type: DataTypes.DOUBLE, allowNull: false },
      enteredUnit: { type: DataTypes.ENUM(...MASS_UNITS), allowNull: false },
      occurredOn: { type: DataTypes.DATEONLY, allowNull: false },
      refrigerant: { type: DataTypes.STRING(16), allowNull: false },
      technicianId: uint(),
      cylinderId: { type: DataTypes.STRING(40), allowNull: false },
      reason: { type: DataTypes.STRING(300), allowNull: false },
      exemption: { type: DataTypes.ENUM(...LEAK_RATE_EXEMPTIONS), allowNull: true },
      sameLeakAsPrevious: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
      createdBy: uint(),
      createdAt: when(),
    },
    { sequelize, tableName: 'refrigerant_entries', modelName: 'RefrigerantEntry', timestamps: false, underscored: true },
  );
}
