/**
 * The kitchen around a box: ambient temperature over the day, door openings and product deliveries.
 * Disturbances come from their own seeded stream and never depend on the model's state, so a
 * faulted run and a healthy run with the same seed see the same doors and deliveries.
 */
import type { SeededRng } from './rng';

/** Door openings per hour as a fraction of the busiest hour, by hour of day (a restaurant day; our choice). */
export const KITCHEN_DOOR_PROFILE: readonly number[] = [
  0.01, 0.01, 0.01, 0.01, 0.01, 0.05, 0.25, 0.5, 0.6, 0.6, 0.8, 1, 1, 0.8, 0.45, 0.4, 0.6, 0.9, 1, 0.9, 0.6, 0.35,
  0.15, 0.05,
];
/** Deliveries arrive between these hours (local, start inclusive, end exclusive). */
export const DELIVERY_HOURS = { from: 6, to: 11 } as const;

/** Hour of day (0–24, fractional) at model time tS for a run whose t = 0 is startEpochMs (UTC). */
export function hourOfDay(startEpochMs: number, tS: number): number {
  const ms = startEpochMs + tS * 1000;
  const dayMs = 86_400_000;
  return (((ms % dayMs) + dayMs) % dayMs) / 3_600_000;
}

/** Kitchen temperature, °C: a daily sine peaking at 15:00 around the mean. */
export function ambientC(meanC: number, swingK: number, hour: number): number {
  return meanC + swingK * Math.cos(((hour - 15) / 24) * 2 * Math.PI);
}

/** A delivery of warm product. */
export interface Delivery {
  massKg: number;
  warmK: number;
}

/** Draws door openings and deliveries step by step, one uniform per process per step. */
export class Disturbances {
  private doorOpenUntilS = -1;
  /** Slow wander of liquid feed (flash gas, head-pressure swings): AR(1), 3 % at 1 σ, ~60 s correlation. */
  private jitter = 0;
  /** The AR(1) factors for the last step length (every step but a short last one has the same dtS, so exp and sqrt run once). */
  private jitterDtS = Number.NaN;
  private jitterA = 0;
  private jitterNoise = 0;
  constructor(
    private readonly rng: SeededRng,
    private readonly doorPeakPerH: number,
    private readonly doorMeanOpenS: number,
    private readonly deliveriesPerDay: number,
    private readonly deliveryKgMax: number,
    private readonly deliveryWarmK: number,
  ) {}

  /** Multiplier on the valve's liquid feed (≈ 1). */
  get feedJitter(): number {
    return 1 + this.jitter;
  }

  /** Advances to tS (after a step of dtS) at the given hour; returns a delivery if one arrived. */
  step(tS: number, dtS: number, hour: number): Delivery | null {
    if (dtS !== this.jitterDtS) {
      this.jitterDtS = dtS;
      this.jitterA = Math.exp(-dtS / 60);
      this.jitterNoise = Math.sqrt(1 - this.jitterA * this.jitterA);
    }
    const a = this.jitterA;
    this.jitter = Math.max(-0.2, Math.min(0.2, a * this.jitter + this.jitterNoise * this.rng.normal(0, 0.03)));
    const rate = this.doorPeakPerH * (KITCHEN_DOOR_PROFILE[Math.floor(hour) % 24] ?? 0);
    const uDoor = this.rng.next();
    const uDuration = this.rng.next();
    if (uDoor < (rate * dtS) / 3600) {
      const openS = Math.min(120, 3 + -this.doorMeanOpenS * Math.log(Math.max(1 - uDuration, 1e-9)));
      this.doorOpenUntilS = Math.max(this.doorOpenUntilS, tS + openS);
    }
    const inWindow = hour >= DELIVERY_HOURS.from && hour < DELIVERY_HOURS.to;
    const windowS = (DELIVERY_HOURS.to - DELIVERY_HOURS.from) * 3600;
    const uDelivery = this.rng.next();
    const uSize = this.rng.next();
    if (inWindow && uDelivery < (this.deliveriesPerDay * dtS) / windowS) {
      // Putting a delivery away keeps the door open for one to three minutes.
      this.doorOpenUntilS = Math.max(this.doorOpenUntilS, tS + 60 + 120 * uSize);
      return { massKg: this.deliveryKgMax * (0.3 + 0.7 * uSize), warmK: this.deliveryWarmK };
    }
    return null;
  }

  /** True while the scheduled door is open at tS. */
  doorOpenAt(tS: number): boolean {
    return tS < this.doorOpenUntilS;
  }
}
