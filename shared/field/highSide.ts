// The high side as a technician reads it: subcooling below the critical point, and for a
// transcritical R-744 system above it (no condensing, so no subcooling) the gas-cooler outlet
// temperature and its approach to the air entering the gas cooler.
import {
  SupercriticalError,
  getRefrigerant,
  isSupercriticalPressure,
  saturationTemperature,
  type RefrigerantId,
} from '../refrigerants/index';
import { gaugeToAbsoluteKPa } from './pressure';
import { formatTemperature, formatTemperatureDelta, type UnitSystem } from './units';

export interface HighSideInput {
  readonly refrigerant: RefrigerantId;
  /** Liquid-line (subcritical) or gas-cooler outlet (transcritical) pressure, kPa(g). */
  readonly highSideKPaG: number;
  /** Liquid-line or gas-cooler outlet temperature at the same point, °C. */
  readonly outletC: number;
  /** Air entering the condenser or gas cooler, °C; null when not measured. */
  readonly ambientC: number | null;
  /** Site elevation, m above sea level. */
  readonly elevationM: number;
}

/** A high side below the critical point: condensing, with subcooling. */
export interface SubcriticalHighSide {
  readonly state: 'subcritical';
  readonly pressureKPaAbs: number;
  /** Bubble-point temperature at the pressure, °C. */
  readonly saturatedC: number;
  /** Bubble point minus liquid-line temperature, K. */
  readonly subcoolingK: number;
}

/** A high side at or above the critical pressure: a gas cooler, no saturation, no subcooling. */
export interface SupercriticalHighSide {
  readonly state: 'supercritical';
  readonly pressureKPaAbs: number;
  readonly criticalKPaAbs: number;
  /** Gas-cooler outlet temperature, °C. */
  readonly gasCoolerOutletC: number;
  /** Gas-cooler outlet minus entering air, K; null without an ambient reading. */
  readonly approachK: number | null;
}

export type HighSideReading = SubcriticalHighSide | SupercriticalHighSide;

function finite(name: string, value: number): void {
  if (!Number.isFinite(value)) throw new RangeError(`${name} must be a finite number, got ${String(value)}`);
}

/** Gas-cooler approach, K: gas-cooler outlet temperature (°C) minus the air entering the gas cooler (°C). */
export function gasCoolerApproachK(gasCoolerOutletC: number, ambientC: number): number {
  finite('gasCoolerOutletC', gasCoolerOutletC);
  finite('ambientC', ambientC);
  return gasCoolerOutletC - ambientC;
}

/**
 * The high side from its pressure, kPa(g), and outlet temperature, °C: subcooling, K, below the
 * critical point; at or above it (R-744 on a warm day) the gas-cooler outlet, °C, and approach, K,
 * instead. Other range errors (below the tables, a blend above its tables) are thrown as they are.
 */
export function highSideReading(input: HighSideInput): HighSideReading {
  finite('outletC', input.outletC);
  if (input.ambientC !== null) finite('ambientC', input.ambientC);
  const pressureKPaAbs = gaugeToAbsoluteKPa(input.highSideKPaG, input.elevationM);
  const critical = getRefrigerant(input.refrigerant).critical;
  if (critical !== null && isSupercriticalPressure(input.refrigerant, pressureKPaAbs)) {
    return {
      state: 'supercritical',
      pressureKPaAbs,
      criticalKPaAbs: critical.pressureKPaAbs,
      gasCoolerOutletC: input.outletC,
      approachK: input.ambientC === null ? null : gasCoolerApproachK(input.outletC, input.ambientC),
    };
  }
  const saturatedC = saturationTemperature(input.refrigerant, pressureKPaAbs, 'bubble');
  return { state: 'subcritical', pressureKPaAbs, saturatedC, subcoolingK: saturatedC - input.outletC };
}

/** Plain words for a supercritical high side in the user's units (temperatures °C in, text out). */
export function describeSupercriticalHighSide(r: SupercriticalHighSide, system: UnitSystem): string {
  const approach =
    r.approachK === null
      ? 'Enter the air temperature entering the gas cooler to see its approach.'
      : `Approach to the entering air: ${formatTemperatureDelta(r.approachK, system)}.`;
  return (
    `Supercritical: the high side is above the critical pressure, so there is no condensing and no ` +
    `subcooling. Gas-cooler outlet ${formatTemperature(r.gasCoolerOutletC, system)}. ${approach}`
  );
}

/** Plain words for a SupercriticalError from the engine, or null for any other error. */
export function describeSupercriticalError(e: unknown): string | null {
  if (!(e instanceof SupercriticalError)) return null;
  return (
    `Supercritical: ${e.id} has no saturation above its critical point ` +
    `(${e.criticalC.toFixed(1)} °C, ${Math.round(e.criticalKPaAbs)} kPa abs), so there is no saturation ` +
    `temperature and no subcooling here.`
  );
}
