/**
 * The simulated clock of a fleet. With speed > 1 it starts in the past and runs `speed` times faster
 * than real time until it has caught up with the real clock, then runs at 1×: readings keep honest
 * simulated timestamps (a 40-min defrost spans 40 min of ts) and never lie in the future.
 */
export class SimClock {
  readonly simStartMs: number;
  readonly realStartMs: number;

  constructor(
    readonly speed: number,
    startAgoS: number,
    private readonly realNow: () => number = Date.now,
  ) {
    if (!(speed >= 1)) throw new RangeError('speed must be ≥ 1 (simulated seconds per real second)');
    if (!(startAgoS >= 0)) throw new RangeError('startAgoS must be ≥ 0');
    this.realStartMs = realNow();
    this.simStartMs = this.realStartMs - Math.round(startAgoS * 1000);
  }

  /** Simulated time now, epoch ms; never later than the real clock. */
  nowMs(): number {
    const real = this.realNow();
    return Math.min(real, this.simStartMs + this.speed * (real - this.realStartMs));
  }

  /** True once the simulated clock has caught up with real time. */
  caughtUp(): boolean {
    return this.nowMs() >= this.realNow();
  }
}

/** How far back a run at `speed` for `durationS` real seconds should start so it ends at real time, s (capped at 7 days). */
export function startAgoFor(speed: number, durationS: number): number {
  return Math.min(7 * 86_400, Math.max(0, (speed - 1) * durationS));
}
