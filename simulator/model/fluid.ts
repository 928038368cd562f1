/**
 * The refrigerant as the box model sees it: the shared saturation engine for one refrigerant at one
 * site elevation. The engine refuses inputs outside its tables; the model keeps its own states inside
 * them (a real low side cannot leave the saturation curve's range in these boxes either), so this
 * adapter limits inputs to the valid range instead of throwing in the middle of a run.
 *
 * Speed: one model step asks for the same saturation point several times (the evaporator solve,
 * the coil mid-point, the coil-inlet temperature and the valve's superheat all take the dew and
 * bubble temperatures at one suction pressure), so each conversion remembers its last input and
 * answer. A repeat returns the engine's own earlier answer, so results are bit for bit those of
 * the shared engine; only the number of calls into it falls.
 */
import {
  getRefrigerant,
  saturationPressure,
  saturationTemperature,
  type RefrigerantId,
} from '../../shared/refrigerants';
import { atmosphericPressureKPa } from '../../shared/field/pressure';

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
  /** Lowest absolute pressure, kPa, at which both curves are defined. */
  readonly minKPaAbs: number;
  /** Last input and answer of each conversion (NaN: none yet; a NaN input never matches, so it reaches the engine). */
  private dewPIn = Number.NaN;
  private dewPOut = Number.NaN;
  private bubblePIn = Number.NaN;
  private bubblePOut = Number.NaN;
  private dewTIn = Number.NaN;
  private dewTOut = Number.NaN;
  private bubbleTIn = Number.NaN;
  private bubbleTOut = Number.NaN;

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
    this.minKPaAbs = Math.max(this.dewMinKPa, this.bubbleMinKPa);
  }


  /** Dew-point (saturated vapour) pressure, kPa abs, at temperatureC. */
  dewKPaAbs(temperatureC: number): number {
    if (temperatureC === this.dewPIn) return this.dewPOut;
    const out = saturationPressure(this.id, this.clampC(temperatureC), 'dew');
    this.dewPIn = temperatureC;
    this.dewPOut = out;
    return out;
  }

  /** Bubble-point (saturated liquid) pressure, kPa abs, at temperatureC. */
  bubbleKPaAbs(temperatureC: number): number {
    if (temperatureC === this.bubblePIn) return this.bubblePOut;
    const out = saturationPressure(this.id, this.clampC(temperatureC), 'bubble');
    this.bubblePIn = temperatureC;
    this.bubblePOut = out;
    return out;
  }

  /** Dew-point temperature, °C, at an absolute pressure in kPa. */
  dewC(kPaAbs: number): number {
    if (kPaAbs === this.dewTIn) return this.dewTOut;
    const out = saturationTemperature(this.id, clamp(kPaAbs, this.dewMinKPa, this.dewMaxKPa), 'dew');
    this.dewTIn = kPaAbs;
    this.dewTOut = out;
    return out;
  }

  /** Bubble-point temperature, °C, at an absolute pressure in kPa. */
  bubbleC(kPaAbs: number): number {
    if (kPaAbs === this.bubbleTIn) return this.bubbleTOut;
    const out = saturationTemperature(this.id, clamp(kPaAbs, this.bubbleMinKPa, this.bubbleMaxKPa), 'bubble');
    this.bubbleTIn = kPaAbs;
    this.bubbleTOut = out;
    return out;
  }

  /** Gauge pressure at this site, kPa(g), from kPa abs (absoluteToGaugeKPa with the site's atmosphere worked out once). */
  toGaugeKPa(kPaAbs: number): number {
    if (!Number.isFinite(kPaAbs)) throw new RangeError(`absolute pressure must be a finite number, got ${String(kPaAbs)}`);
    return kPaAbs - this.atmosphereKPa;
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
