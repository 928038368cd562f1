/**
 * sensor-fault: a thermistor at an end of its input (an open NTC reads off-scale cold, a shorted one
 * off-scale hot: TRADE-NOTES §4), a suction transducer at an end of its range, or a box-air reading
 * stuck bit-identical for hours (a flat-lined sensor). Box air cannot hold one value that long in a
 * working box whatever the compressor does: cycling it swings, with the compressor off it warms, and
 * running on it cools. A stuck box-air sensor is also what keeps a compressor from starting (stuck
 * cold: the box warms unseen) or from stopping (stuck warm: the box freezes), so no compressor
 * condition is required.
 */
import type { RuleReading } from '../alarms/types';
import { MIN_MS, emitStep, fmt1, handleDisabled, newCond, stepCondition, type CondState, type RuleContext } from './condition';

/** Thermistor readings at or below this are an open circuit, °C (telemetry range ends at −60 °C; half a unit of margin). */
export const THERMISTOR_OPEN_C = -59.5;
/** Thermistor readings at or above this are a short circuit, °C (telemetry range ends at 130 °C). */
export const THERMISTOR_SHORTED_C = 129.5;
/** Suction readings at or below this are a transducer at its bottom end, kPa(g) (telemetry limit −101; a running system never pulls a full vacuum). */
export const SUCTION_MIN_KPAG = -100;
/** Suction readings at or above this are a transducer at its top end, kPa(g) (telemetry limit 14,000). */
export const SUCTION_MAX_KPAG = 13_900;

/** 'open' / 'shorted' when a thermistor reading is at an end of its input, null when plausible. */
export function thermistorFault(c: number): 'open' | 'shorted' | null {
  if (c <= THERMISTOR_OPEN_C) return 'open';
  if (c >= THERMISTOR_SHORTED_C) return 'shorted';
  return null;
}

export interface SensorState {
  cond: CondState;
  stuckValueC: number | null;
  stuckSinceMs: number | null;
  startsWhileStuck: number;
}

/** A fresh sensor-fault state. */
export function newSensorState(): SensorState {
  return { cond: newCond(), stuckValueC: null, stuckSinceMs: null, startsWhileStuck: 0 };
}

/** The first sensor problem in a reading, as a sentence, or null. */
function findFault(st: SensorState, r: RuleReading, stuckMin: number): string | null {
  const box = thermistorFault(r.boxAirC);
  if (box) return `The box-air thermistor reads ${fmt1(r.boxAirC)} °C: ${box} circuit.`;
  const line = thermistorFault(r.suctionLineC);
  if (line) return `The suction-line thermistor reads ${fmt1(r.suctionLineC)} °C: ${line} circuit.`;
  if (r.coilInletC !== null) {
    const coil = thermistorFault(r.coilInletC);
    if (coil) return `The coil-inlet thermistor reads ${fmt1(r.coilInletC)} °C: ${coil} circuit.`;
  }
  if (r.suctionKPaG <= SUCTION_MIN_KPAG || r.suctionKPaG >= SUCTION_MAX_KPAG) return `The suction transducer reads ${Math.round(r.suctionKPaG)} kPa(g), at the end of its range.`;
  if (st.stuckSinceMs !== null && r.tsMs - st.stuckSinceMs >= stuckMin * MIN_MS) {
    const compressor = st.startsWhileStuck > 0 ? `the compressor started ${st.startsWhileStuck} times meanwhile` : r.compressorOn ? 'the compressor has run on' : 'the compressor has not started';
    return `The box-air reading has not changed (${fmt1(r.boxAirC)} °C) for ${Math.round((r.tsMs - st.stuckSinceMs) / MIN_MS)} min and ${compressor}: the sensor may be stuck. Check the box temperature with a thermometer.`;
  }
  return null;
}

/** Evaluates sensor-fault for one reading. */
export function evalSensors(st: SensorState, ctx: RuleContext, r: RuleReading): void {
  const t = r.tsMs;
  // Track the flat line: the exact same value (bit-identical) since stuckSinceMs.
  if (st.stuckValueC === r.boxAirC) {
    if (ctx.compressorStarted) st.startsWhileStuck += 1;
  } else {
    st.stuckValueC = r.boxAirC;
    st.stuckSinceMs = t;
    st.startsWhileStuck = 0;
  }
  if (handleDisabled(ctx, 'sensor-fault', st.cond, t)) return;
  const rule = ctx.rules['sensor-fault'];
  const fault = findFault(st, r, rule.threshold);
  const change = stepCondition(st.cond, fault !== null ? 'bad' : 'ok', t, rule, ctx.raiseBlocked);
  if (change !== null) emitStep(ctx, 'sensor-fault', st.cond, change, t, null, () => fault ?? '', 'All sensors read plausible values again.');
}
