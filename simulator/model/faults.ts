/**
 * Faults the simulator can inject, each producing the trend signature a technician reads
 * (TRADE-NOTES §4 table; see simulator/README.md for what each one does to the model).
 */
// The names are shared with the server's demo fault route and the client.
export { FAULT_NAMES, THERMISTOR_NAMES, type FaultName, type ThermistorName } from '../../shared/schemas/demo';
import type { FaultName, ThermistorName } from '../../shared/schemas/demo';

/** An open NTC reads off-scale cold, a shorted one off-scale hot: the ends of the telemetry range, °C. */
export const OPEN_THERMISTOR_C = -60;
export const SHORTED_THERMISTOR_C = 130;

/** The thermistor a sensor fault hits when none is named. */
export const DEFAULT_FAULT_THERMISTOR: ThermistorName = 'suctionLineC';

/** Fraction of the valve's full feed that still reaches the coil with a low charge (flash gas in the liquid line). */
export const LOW_CHARGE_LIQUID_FRACTION = 0.25;
/** Subcooling left with a low charge, K (TRADE-NOTES §4: subcooling low). */
export const LOW_CHARGE_SUBCOOLING_K = 0.5;
/** Coil air path blocked by ice once an iced-coil fault has fully built up, fraction, and its build-up time, s. */
export const ICED_COIL_BLOCKED_FRACTION = 0.95;
export const ICED_COIL_BUILD_S = 7200;
/** Liquid passing a closed valve seat, as a fraction of compressor capacity. */
export const LEAK_THROUGH_FRACTION = 0.1;
/**
 * A badly leaking valve or solenoid: the closed seat passes as much as the valve open this far
 * (fraction of full travel; our choice). That feed keeps the low side near its running pressure, so
 * a pump-down never reaches the low-pressure cut-out and ends on its time limit.
 */
export const SEVERE_LEAK_OPEN_FRACTION = 0.4;
/** A drifting thermistor reads this much higher each hour after the fault began, K/h, up to DRIFT_MAX_K (our choice: fast enough to see in a demo). */
export const DRIFT_K_PER_H = 0.5;
export const DRIFT_MAX_K = 8;
/** Faults that hit one chosen thermistor. */
export const SENSOR_FAULTS: readonly FaultName[] = ['thermistor-open', 'thermistor-shorted', 'sensor-stuck', 'sensor-drift'];
/** A door left ajar passes this fraction of the air of a fully open door. */
export const DOOR_AJAR_FRACTION = 0.6;
/** Short cycling: the low-pressure control set so tight that it opens within a minute of each start. */
export const SHORT_CYCLE_CUTOUT_BELOW_SETPOINT_K = 2;
export const SHORT_CYCLE_LP_DIFFERENTIAL_KPA = 15;
export const SHORT_CYCLE_DIFFERENTIAL_K = 0.3;

/** One active fault: when it started (model seconds) and, for sensor faults, which thermistor. */
export interface ActiveFault {
  sinceS: number;
  sensor?: ThermistorName;
  /** sensor-stuck: the value the thermistor keeps reporting, °C (what it read when the fault began). */
  heldC?: number;
}
