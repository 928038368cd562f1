// Errors of the refrigerant engine: each carries a stable `code` so screens and the ingest can say
// why there is no saturation value ('out-of-range' or 'supercritical') without parsing messages.
import { GENERATED_IDS } from './data.generated';
import type { RefrigerantId, RefrigerantQuantity, SaturationCurveName } from './index';

/**
 * Why the engine gave no saturation value: 'out-of-range' (outside the tables, NaN or non-finite) or
 * 'supercritical' (at or above the critical point: no saturation exists, so no saturation
 * temperature, no subcooling).
 */
export type RefrigerantErrorCode = 'out-of-range' | 'supercritical';

/** Thrown for an input outside a refrigerant's valid range, NaN or a non-finite number (code 'out-of-range'). */
export class RefrigerantRangeError extends RangeError {
  readonly code: RefrigerantErrorCode = 'out-of-range';
  readonly id: RefrigerantId;
  readonly quantity: RefrigerantQuantity;
  readonly value: number;
  readonly min: number;
  readonly max: number;
  readonly curve: SaturationCurveName;

  constructor(
    id: RefrigerantId,
    quantity: RefrigerantQuantity,
    value: number,
    min: number,
    max: number,
    curve: SaturationCurveName,
  ) {
    const unit = quantity === 'temperatureC' ? '°C' : 'kPa abs';
    super(
      `${id} ${curve}-point ${quantity === 'temperatureC' ? 'temperature' : 'pressure'} ${String(value)} ${unit} ` +
        `is outside the valid range ${round(min)}..${round(max)} ${unit}`,
    );
    this.name = 'RefrigerantRangeError';
    this.id = id;
    this.quantity = quantity;
    this.value = value;
    this.min = min;
    this.max = max;
    this.curve = curve;
  }
}

/**
 * Thrown (code 'supercritical') for a pressure, kPa abs, or temperature, °C, at or above a pure
 * fluid's critical point: there is no liquid-vapour saturation there. For R-744 this is the normal
 * high side of a transcritical system on a warm day (gas cooler, not condenser). A subclass of
 * RefrigerantRangeError so that every caller that states range errors also states this one; check
 * `code` or `instanceof SupercriticalError` to say "supercritical" rather than "out of range".
 */
export class SupercriticalError extends RefrigerantRangeError {
  override readonly code: RefrigerantErrorCode = 'supercritical';
  readonly criticalC: number;
  readonly criticalKPaAbs: number;

  constructor(
    id: RefrigerantId,
    quantity: RefrigerantQuantity,
    value: number,
    min: number,
    max: number,
    curve: SaturationCurveName,
    critical: { readonly temperatureC: number; readonly pressureKPaAbs: number },
  ) {
    super(id, quantity, value, min, max, curve);
    this.name = 'SupercriticalError';
    this.criticalC = critical.temperatureC;
    this.criticalKPaAbs = critical.pressureKPaAbs;
    const what =
      quantity === 'temperatureC'
        ? `${String(value)} °C is at or above the critical temperature ${round(critical.temperatureC)} °C`
        : `${String(value)} kPa abs is at or above the critical pressure ${round(critical.pressureKPaAbs)} kPa abs`;
    this.message = `${id} is supercritical: ${what}; there is no saturation (no dew or bubble point, no subcooling) above the critical point`;
  }
}

/** Thrown for a refrigerant id Rimehold has no data for. */
export class UnknownRefrigerantError extends Error {
  readonly id: string;

  constructor(id: string) {
    super(`Unknown refrigerant "${id}"; known: ${GENERATED_IDS.join(', ')}`);
    this.name = 'UnknownRefrigerantError';
    this.id = id;
  }
}

function round(x: number): string {
  return String(Math.round(x * 1000) / 1000);
}
