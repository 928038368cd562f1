/**
 * Expansion valves. The EEV is a step motor counted in steps and driven by a PI loop on superheat;
 * the TXV is a proportional valve whose bulb follows the suction line with a lag.
 */
import { clamp } from './fluid';

export interface EevTuning {
  fullSteps: number;
  /** Fraction of full travel per K of superheat error. */
  kpPerK: number;
  /** Integral time, s. */
  tiS: number;
  /** Step-rate limit, steps/s. */
  maxStepsPerS: number;
}

/** What the controller asks of the valve this step. */
export type EevMode = { kind: 'closed' } | { kind: 'hold'; fraction: number } | { kind: 'pi'; superheatK: number; targetK: number };

/** A step-motor EEV with its PI superheat loop (anti-windup by conditional integration). */
export class SteppedValve {
  steps = 0;
  /** Integral part of the PI output, fraction of travel. */
  private integral = 0;
  private carry = 0;

  constructor(private readonly tuning: EevTuning) {}

  /** Opening as a fraction of full travel (steps / full steps, TRADE-NOTES §3). */
  get fraction(): number {
    return this.steps / this.tuning.fullSteps;
  }

  /** Moves the motor toward what the mode asks, at most maxStepsPerS · dtS steps. */
  update(dtS: number, mode: EevMode): void {
    const { fullSteps, kpPerK, tiS, maxStepsPerS } = this.tuning;
    let wanted: number;
    if (mode.kind === 'closed') {
      wanted = 0;
      this.integral = 0;
    } else if (mode.kind === 'hold') {
      wanted = mode.fraction;
      this.integral = mode.fraction; // bumpless hand-over to the PI loop
    } else {
      const errorK = mode.superheatK - mode.targetK; // too much superheat → open
      const p = kpPerK * errorK;
      const unclamped = p + this.integral;
      const saturatedHigh = unclamped >= 1 && errorK > 0;
      const saturatedLow = unclamped <= 0 && errorK < 0;
      if (!saturatedHigh && !saturatedLow) this.integral += (kpPerK / tiS) * errorK * dtS;
      this.integral = clamp(this.integral, 0, 1);
      wanted = clamp(p + this.integral, 0, 1);
    }
    const target = Math.round(wanted * fullSteps);
    // Closing fully is done at the motor's full rate: the controller overdrives closed to resynchronise.
    const rate = mode.kind === 'closed' ? maxStepsPerS * 4 : maxStepsPerS;
    // Whole steps only; unused rate is carried to the next step (at most one second's worth).
    this.carry = Math.min(this.carry + rate * dtS, rate + 1);
    const budget = Math.floor(this.carry);
    const delta = clamp(target - this.steps, -budget, budget);
    this.carry -= Math.abs(delta);
    this.steps = clamp(this.steps + delta, 0, fullSteps);
  }
}

/** A thermostatic valve: opening ∝ bulb superheat above the static spring setting. */
export class ThermostaticValve {
  bulbC: number;
  fraction = 0;

  constructor(
    private readonly staticSuperheatK: number,
    private readonly gradientK: number,
    private readonly bulbTauS: number,
    initialBulbC: number,
  ) {
    this.bulbC = initialBulbC;
  }

  /** Follows the suction line with the bulb lag; opening from the bulb's superheat over the evaporator dew point (external equaliser). */
  update(dtS: number, suctionLineC: number, dewC: number, solenoidOpen: boolean): void {
    this.bulbC += ((suctionLineC - this.bulbC) * Math.min(1, dtS / this.bulbTauS));
    this.fraction = solenoidOpen ? clamp((this.bulbC - dewC - this.staticSuperheatK) / this.gradientK, 0, 1) : 0;
  }
}
