/** Domain vocabularies shared by client, server and simulator. */

/** admin: the contractor's office; technician: field staff; manager: a customer's store manager. */
export const ROLES = ['admin', 'technician', 'manager'] as const;
export type Role = (typeof ROLES)[number];

/** A walk-in (or reach-in) cooler holds medium temperature; a freezer low temperature. */
export const BOX_KINDS = ['cooler', 'freezer'] as const;
export type BoxKind = (typeof BOX_KINDS)[number];

/** eev: electronic step-motor valve with its controller; txv: thermostatic valve watched by a sensor-only node. */
export const VALVE_TYPES = ['eev', 'txv'] as const;
export type ValveType = (typeof VALVE_TYPES)[number];

/** pressure: suction transducer + P-T relation (dew curve); coil-thermistor: a second thermistor at the coil inlet. */
export const SATURATION_METHODS = ['pressure', 'coil-thermistor'] as const;
export type SaturationMethod = (typeof SATURATION_METHODS)[number];

/** off-cycle: compressor off, fans on (coolers); electric: heaters with termination temperature; hot-gas. */
export const DEFROST_TYPES = ['off-cycle', 'electric', 'hot-gas'] as const;
export type DefrostType = (typeof DEFROST_TYPES)[number];

/** Unit preference of a user: imperial = °F and psig; metric = °C with bar(g) or kPa(g). */
export const UNIT_SYSTEMS = ['imperial', 'metric-bar', 'metric-kpa'] as const;
export type UnitSystemPref = (typeof UNIT_SYSTEMS)[number];

/** Default full travel of a step-motor expansion valve (common practice: about 1,600 steps). */
export const DEFAULT_VALVE_FULL_STEPS = 1600;
