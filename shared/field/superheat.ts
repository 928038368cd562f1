// Superheat, subcooling and valve position as a technician reads them. Superheat uses the dew
// curve (saturated vapour), subcooling the bubble curve (saturated liquid): on a zeotropic blend
// the two differ by the glide at the same pressure.
import {
  getRefrigerant,
  saturationPressure,
  saturationTemperature,
  type RefrigerantId,
} from '../refrigerants/index';
import { gaugeToAbsoluteKPa } from './pressure';
import { deltaFToDeltaK, formatTemperatureDelta, type UnitSystem } from './units';

/**
 * Evaporator superheat floor, K (5 °F difference = 2.78 K): the lowest evaporator superheat target
 * accepted without an explicit override, and the level below which superheat is called low.
 * Common practice (no single source): technicians keep evaporator superheat above about 5 °F so that
 * liquid does not leave the coil. It is a field rule of thumb for the evaporator, not a compressor
 * maker's rating; the compressor maker's own minimum suction superheat, where given, governs.
 */
export const EVAPORATOR_SUPERHEAT_FLOOR_K = deltaFToDeltaK(5);

/**
 * Glide, K, from which the two-thermistor method is flagged. Rimehold's choice: at 1 K and more the
 * overstatement is a sizeable part of a typical 2-5 K superheat target.
 */
export const GLIDE_WARNING_THRESHOLD_K = 1;

function finite(name: string, value: number): void {
  if (!Number.isFinite(value)) throw new RangeError(`${name} must be a finite number, got ${String(value)}`);
}

export interface PressureSuperheatInput {
  readonly refrigerant: RefrigerantId;
  /** Suction pressure at the coil outlet, kPa(g). */
  readonly suctionKPaG: number;
  /** Suction-line temperature at the same point, °C. */
  readonly suctionLineC: number;
  /** Site elevation, m above sea level (sets the atmosphere the gauge reads against). */
  readonly elevationM: number;
}

export interface PressureSuperheat {
  /** Dew-point temperature at the suction pressure, °C. */
  readonly saturatedSuctionC: number;
  /** Suction-line temperature minus saturated suction temperature, K. */
  readonly superheatK: number;
}

/** Superheat, K, and saturated suction temperature, °C (dew point), from suction pressure and line temperature. */
export function superheatByPressureK(input: PressureSuperheatInput): PressureSuperheat {
  finite('suctionLineC', input.suctionLineC);
  const absKPa = gaugeToAbsoluteKPa(input.suctionKPaG, input.elevationM);
  const saturatedSuctionC = saturationTemperature(input.refrigerant, absKPa, 'dew');
  return { saturatedSuctionC, superheatK: input.suctionLineC - saturatedSuctionC };
}

export interface ThermistorSuperheatInput {
  readonly refrigerant: RefrigerantId;
  /** Coil-outlet (suction-line) temperature, °C. */
  readonly suctionLineC: number;
  /** Coil-inlet temperature, °C, taken as the evaporating temperature. */
  readonly coilInletC: number;
}

export interface ThermistorSuperheat {
  /** Suction-line minus coil-inlet temperature, K. */
  readonly superheatK: number;
  /** True when the refrigerant's glide makes this reading overstate superheat noticeably. */
  readonly glideWarning: boolean;
  /** Glide, K, at the pressure whose bubble point is the coil-inlet temperature: the largest overstatement. */
  readonly glideK: number;
  /** The dew point at the inlet's pressure, °C: the inlet reading plus the glide (the inlet taken at its bubble point). */
  readonly dewPointC: number;
  /** Suction-line minus that dew point, K: the pressure method's figure, and the lower bound of the true superheat. */
  readonly superheatAgainstDewK: number;
  /** Plain-words explanation when glideWarning is set, otherwise null. */
  readonly note: string | null;
}

/**
 * Superheat, K, by the two-thermistor method (outlet − inlet). On a blend with glide the inlet
 * sensor sees two-phase refrigerant near its bubble point, colder than the dew point the pressure
 * method uses, so this reading overstates superheat by up to about the glide.
 */
export function superheatByThermistorsK(input: ThermistorSuperheatInput, system: UnitSystem = 'metric-kpa'): ThermistorSuperheat {
  finite('suctionLineC', input.suctionLineC);
  finite('coilInletC', input.coilInletC);
  const info = getRefrigerant(input.refrigerant);
  const pKPa = saturationPressure(input.refrigerant, input.coilInletC, 'bubble');
  const glideK = Math.max(0, saturationTemperature(input.refrigerant, pKPa, 'dew') - input.coilInletC);
  const glideWarning = glideK >= GLIDE_WARNING_THRESHOLD_K;
  const note = glideWarning
    ? `${info.id} has a temperature glide of about ${formatTemperatureDelta(glideK, system)} here. The coil-inlet ` +
      `sensor reads near the bubble point, so this reading can overstate superheat by up to that much ` +
      `compared with the pressure method; set targets with that in mind.`
    : null;
  const dewPointC = input.coilInletC + glideK;
  return { superheatK: input.suctionLineC - input.coilInletC, glideWarning, glideK, dewPointC, superheatAgainstDewK: input.suctionLineC - dewPointC, note };
}

export interface SubcoolingInput {
  readonly refrigerant: RefrigerantId;
  /** Liquid-line pressure, kPa(g). */
  readonly liquidKPaG: number;
  /** Liquid-line temperature at the same point, °C. */
  readonly liquidLineC: number;
  /** Site elevation, m above sea level. */
  readonly elevationM: number;
}

/** Subcooling, K: bubble-point temperature at the liquid-line pressure minus liquid-line temperature. */
export function subcoolingK(input: SubcoolingInput): number {
  finite('liquidLineC', input.liquidLineC);
  const absKPa = gaugeToAbsoluteKPa(input.liquidKPaG, input.elevationM);
  return saturationTemperature(input.refrigerant, absKPa, 'bubble') - input.liquidLineC;
}

/** Valve opening, % (0-100), from a step count and the valve's full-travel steps; RangeError if invalid. */
export function valvePercent(steps: number, fullSteps: number): number {
  if (!Number.isInteger(fullSteps) || fullSteps < 1) {
    throw new RangeError(`fullSteps must be a positive integer, got ${String(fullSteps)}`);
  }
  if (!Number.isInteger(steps) || steps < 0 || steps > fullSteps) {
    throw new RangeError(`steps must be an integer in 0..${fullSteps}, got ${String(steps)}`);
  }
  return (steps / fullSteps) * 100;
}

export type SuperheatVerdict = 'low' | 'in-band' | 'high';

export interface SuperheatJudgement {
  readonly verdict: SuperheatVerdict;
  /** True when the superheat is below EVAPORATOR_SUPERHEAT_FLOOR_K (common practice). */
  readonly belowSuperheatFloor: boolean;
  readonly message: string;
}

/**
 * Superheat (K) against a target (K) ± a half-width band (K): 'low', 'in-band' or 'high' with a
 * plain-words message in the user's units.
 */
export function judgeSuperheat(
  superheatK: number,
  targetK: number,
  bandK: number,
  system: UnitSystem = 'metric-kpa',
): SuperheatJudgement {
  finite('superheatK', superheatK);
  finite('targetK', targetK);
  finite('bandK', bandK);
  if (bandK < 0) throw new RangeError(`bandK must not be negative, got ${bandK}`);
  const fmt = (k: number): string => formatTemperatureDelta(k, system);
  const band = `${fmt(targetK - bandK)} to ${fmt(targetK + bandK)}`;
  const belowSuperheatFloor = superheatK < EVAPORATOR_SUPERHEAT_FLOOR_K;
  const protection = belowSuperheatFloor
    ? ` It is also below the ${fmt(EVAPORATOR_SUPERHEAT_FLOOR_K)} evaporator superheat floor (common practice), ` +
      `under which liquid may leave the coil.`
    : '';
  if (superheatK < targetK - bandK) {
    return {
      verdict: 'low',
      belowSuperheatFloor,
      message:
        `Superheat ${fmt(superheatK)} is below the target band of ${band}: the coil may be overfed, ` +
        `which risks liquid refrigerant reaching the compressor.${protection}`,
    };
  }
  if (superheatK > targetK + bandK) {
    return {
      verdict: 'high',
      belowSuperheatFloor,
      message:
        `Superheat ${fmt(superheatK)} is above the target band of ${band}: the coil may be short of ` +
        `refrigerant and not cooling with its whole surface.${protection}`,
    };
  }
  return {
    verdict: 'in-band',
    belowSuperheatFloor,
    message: `Superheat ${fmt(superheatK)} is within the target band of ${band}.${protection}`,
  };
}
