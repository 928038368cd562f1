/**
 * One definition of a box's fields: the kinds and choices with their labels, the numeric settings
 * with their label, quantity (temperature, temperature difference or plain number), limits and
 * whether the controller holds them, and the starting values of a new box per kind. The box form,
 * the CSV import, the demo seed and the tests read it from here so they cannot drift apart.
 */
import { BOX_KINDS, DEFROST_TYPES, SATURATION_METHODS, VALVE_TYPES, type BoxKind, type DefrostType, type SaturationMethod, type ValveType } from './domain';
import type { RefrigerantId } from './refrigerants';
import { BOX_LIMITS, type BoxCreateBody } from './schemas/boxes';

export { BOX_KINDS, DEFROST_TYPES, SATURATION_METHODS, VALVE_TYPES };

/** Kind labels for pickers. */
export const BOX_KIND_LABELS: Record<BoxKind, string> = { cooler: 'Cooler (medium temperature)', freezer: 'Freezer (low temperature)' };
/** Kind labels for tables and cards. */
export const BOX_KIND_SHORT_LABELS: Record<BoxKind, string> = { cooler: 'Cooler', freezer: 'Freezer' };
export const VALVE_TYPE_LABELS: Record<ValveType, string> = { eev: 'Electronic valve (EEV) with controller', txv: 'Thermostatic valve (TXV), sensors only' };
export const SATURATION_METHOD_LABELS: Record<SaturationMethod, string> = { pressure: 'Suction pressure transducer', 'coil-thermistor': 'Coil-inlet thermistor' };
export const DEFROST_TYPE_LABELS: Record<DefrostType, string> = { 'off-cycle': 'Off-cycle', electric: 'Electric', 'hot-gas': 'Hot gas' };

/** What a numeric field measures: a temperature (°C), a temperature difference (K) or a plain number with its own unit. */
export type BoxFieldQuantity = 'temp' | 'delta' | 'plain';

/** The form section a field is shown in. */
export type BoxFieldGroup = 'alarms' | 'valve' | 'defrost';

/** The numeric settings of a box (°C, K, minutes, hours as their names say). */
export type BoxNumberKey =
  | 'setpointC'
  | 'differentialK'
  | 'highLimitC'
  | 'lowLimitC'
  | 'alarmDelayMin'
  | 'doorAlarmDelayMin'
  | 'superheatTargetK'
  | 'defrostIntervalH'
  | 'defrostMaxMin'
  | 'defrostTerminationC'
  | 'dripMin'
  | 'fanDelayMin';

/** One numeric setting: its label, quantity, limits (in °C, K or its plain unit) and who holds it. */
export interface BoxNumberField {
  key: BoxNumberKey;
  label: string;
  quantity: BoxFieldQuantity;
  /** Unit of a plain number. */
  unit?: 'min' | 'h';
  /** True when the controller holds the value (changed through PUT /boxes/:id/settings once provisioned). */
  controller: boolean;
  group: BoxFieldGroup;
  limits: { readonly min: number; readonly max: number };
}

/** Every numeric setting of a box, in form order. */
export const BOX_NUMBER_FIELDS: readonly BoxNumberField[] = [
  { key: 'setpointC', label: 'Setpoint', quantity: 'temp', controller: true, group: 'alarms', limits: BOX_LIMITS.setpointC },
  { key: 'differentialK', label: 'Differential', quantity: 'delta', controller: true, group: 'alarms', limits: BOX_LIMITS.differentialK },
  { key: 'highLimitC', label: 'High limit', quantity: 'temp', controller: false, group: 'alarms', limits: BOX_LIMITS.limitC },
  { key: 'lowLimitC', label: 'Low limit', quantity: 'temp', controller: false, group: 'alarms', limits: BOX_LIMITS.limitC },
  { key: 'alarmDelayMin', label: 'Alarm delay', quantity: 'plain', unit: 'min', controller: false, group: 'alarms', limits: BOX_LIMITS.alarmDelayMin },
  { key: 'doorAlarmDelayMin', label: 'Door alarm delay', quantity: 'plain', unit: 'min', controller: false, group: 'alarms', limits: BOX_LIMITS.doorAlarmDelayMin },
  { key: 'superheatTargetK', label: 'Superheat target', quantity: 'delta', controller: true, group: 'valve', limits: BOX_LIMITS.superheatTargetK },
  { key: 'defrostIntervalH', label: 'Defrost every', quantity: 'plain', unit: 'h', controller: true, group: 'defrost', limits: BOX_LIMITS.defrostIntervalH },
  { key: 'defrostMaxMin', label: 'Defrost time limit', quantity: 'plain', unit: 'min', controller: true, group: 'defrost', limits: BOX_LIMITS.defrostMaxMin },
  { key: 'defrostTerminationC', label: 'Defrost termination', quantity: 'temp', controller: true, group: 'defrost', limits: BOX_LIMITS.defrostTerminationC },
  { key: 'dripMin', label: 'Drip time', quantity: 'plain', unit: 'min', controller: true, group: 'defrost', limits: BOX_LIMITS.dripMin },
  { key: 'fanDelayMin', label: 'Fan delay', quantity: 'plain', unit: 'min', controller: true, group: 'defrost', limits: BOX_LIMITS.fanDelayMin },
];

/** The form sections, in order. */
export const BOX_FIELD_GROUPS: ReadonlyArray<{ id: BoxFieldGroup; title: string }> = [
  { id: 'alarms', title: 'Temperatures and alarms' },
  { id: 'valve', title: 'Valve' },
  { id: 'defrost', title: 'Defrost' },
];

/** Everything of a new box but its site, name and refrigerant. */
export type BoxDefaults = Omit<BoxCreateBody, 'siteId' | 'name' | 'refrigerant'>;

/** Refrigerant a new box starts with in the form (our choice: a common HFO blend for new walk-ins). */
export const DEFAULT_BOX_REFRIGERANT: RefrigerantId = 'R-448A';

/**
 * Starting values of a new box, by kind (common practice for walk-ins; the cooler's 5 °C high limit
 * is 41 °F, the cold-holding limit of FDA Food Code 3-501.16(A)(2)). °C, K, minutes, hours.
 */
export const BOX_DEFAULTS: Readonly<Record<BoxKind, Readonly<BoxDefaults>>> = {
  cooler: {
    kind: 'cooler',
    setpointC: 2,
    differentialK: 1.5,
    highLimitC: 5,
    lowLimitC: -1,
    alarmDelayMin: 30,
    doorAlarmDelayMin: 5,
    valveType: 'eev',
    saturationMethod: 'pressure',
    superheatTargetK: 5.5,
    defrostType: 'off-cycle',
    defrostIntervalH: 6,
    defrostMaxMin: 30,
    defrostTerminationC: 8,
    dripMin: 2,
    fanDelayMin: 0,
  },
  freezer: {
    kind: 'freezer',
    setpointC: -20,
    differentialK: 2,
    highLimitC: -12,
    lowLimitC: -30,
    alarmDelayMin: 30,
    doorAlarmDelayMin: 5,
    valveType: 'eev',
    saturationMethod: 'pressure',
    superheatTargetK: 5.5,
    defrostType: 'electric',
    defrostIntervalH: 6,
    defrostMaxMin: 30,
    defrostTerminationC: 12,
    dripMin: 3,
    fanDelayMin: 2,
  },
};

/** A copy of the starting values of a new box of this kind (°C, K, minutes, hours). */
export function boxDefaults(kind: BoxKind): BoxDefaults {
  return { ...BOX_DEFAULTS[kind] };
}

/** The numeric field of a key. */
export function boxNumberField(key: BoxNumberKey): BoxNumberField {
  const f = BOX_NUMBER_FIELDS.find((x) => x.key === key);
  if (!f) throw new Error(`unknown box field ${key}`);
  return f;
}
