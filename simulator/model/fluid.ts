/**
 * The refrigerant as the box model sees it: the shared saturation engine for one refrigerant at one
 * site elevation. The engine refuses inputs outside its tables; the model keeps its own states inside
 * them (a real low side cannot leave the saturation curve's range in these boxes either), so this
 * adapter limits inputs to the valid range instead of throwing in the middle of a run.
 */
import {
  getRefrigerant,
  saturationPressure,
  saturationTemperature,
  type RefrigerantId,
} from '../../shared/refrigerants';
import { absoluteToGaugeKPa, atmosphericPressureKPa } from '../../shared/field/pressure';

export type { RefrigerantId };

/** Saturation properties of one refrigerant at one site. */
export class Fluid {
  readonly id: RefrigerantId;
  readonly elevationM: number;
  /** Local atmospheric pressure, kPa abs. */
  readonly atmosphereKPa: number;
  readonly minC: number;
  readonly maxC: number;
  private readonly dewMinKPa: number;
  private readonly dewMaxKPa: number;
  private readonly bubbleMinKPa: number;
  private readonly bubbleMaxKPa: number;

  constructor(id: RefrigerantId, elevationM: number) {
    const info = getRefrigerant(id);
    this.id = id;
    this.elevationM = elevationM;
    this.atmosphereKPa = atmosphericPressureKPa(elevationM);
    this.minC = info.validRange.minC;
    this.maxC = info.validRange.maxC;
    this.dewMinKPa = info.validPressureKPaAbs.dew.min;
    this.dewMaxKPa = info.validPressureKPaAbs.dew.max;
    this.bubbleMinKPa = info.validPressureKPaAbs.bubble.min;
    this.bubbleMaxKPa = info.validPressureKPaAbs.bubble.max;
  }

  /** Lowest absolute pressure, kPa, at which both curves are defined. */
  get minKPaAbs(): number {
    return Math.max(this.dewMinKPa, this.bubbleMinKPa);
  }

  /** Dew-point (saturated vapour) pressure, kPa abs, at temperatureC. */
  dewKPaAbs(temperatureC: number): number {
    return saturationPressure(this.id, this.clampC(temperatureC), 'dew');
  }

  /** Bubble-point (saturated liquid) pressure, kPa abs, at temperatureC. */
  bubbleKPaAbs(temperatureC: number): number {
    return saturationPressure(this.id, this.clampC(temperatureC), 'bubble');
  }

  /** Dew-point temperature, °C, at an absolute pressure in kPa. */
  dewC(kPaAbs: number): number {
    return saturationTemperature(this.id, clamp(kPaAbs, this.dewMinKPa, this.dewMaxKPa), 'dew');
  }

  /** Bubble-point temperature, °C, at an absolute pressure in kPa. */
  bubbleC(kPaAbs: number): number {
    return saturationTemperature(this.id, clamp(kPaAbs, this.bubbleMinKPa, this.bubbleMaxKPa), 'bubble');
  }

  /** Gauge pressure at this site, kPa(g), from kPa abs. */
  toGaugeKPa(kPaAbs: number): number {
    return absoluteToGaugeKPa(kPaAbs, this.elevationM);
  }

  /** Absolute pressure, kPa, from a gauge reading at this site in kPa(g). */
  toAbsoluteKPa(kPaG: number): number {
    return kPaG + this.atmosphereKPa;
  }

  private clampC(temperatureC: number): number {
    return clamp(temperatureC, this.minC, this.maxC);
  }
}

/** x limited to [lo, hi]. */
export function clamp(x: number, lo: number, hi: number): number {
  return x < lo ? lo : x > hi ? hi : x;
}
