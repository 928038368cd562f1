/**
 * The defrost cycle of a box controller: scheduled start, termination on coil temperature or on the
 * time limit (fail-safe), drip time, then a fan delay until the coil is cold again.
 * TRADE-NOTES §2: off-cycle for coolers (ACHR 110983); electric for freezers ending near 10 °C coil
 * with a 35–45 min fail-safe (hvacfun; walk-in I&O manual); fans back at about −4 °C coil.
 */
import type { BoxSettings } from './params';

export type DefrostPhase = 'none' | 'defrost' | 'drip' | 'fan-delay';
export type DefrostEndReason = 'temperature' | 'time';

/** The box's defrost settings (see BoxSettings) plus the fan-restart coil temperature. */
export interface DefrostConfig extends Pick<BoxSettings, 'defrostType' | 'defrostIntervalH' | 'defrostMaxMin' | 'defrostTerminationC' | 'dripMin' | 'fanDelayMin'> {
  /** Coil temperature at which the fans restart after a heated defrost, °C. */
  fanStartCoilC: number;
}

/** A finished defrost, for tests and logs (model seconds). */
export interface DefrostRecord {
  startS: number;
  endS: number;
  reason: DefrostEndReason;
  maxCoilC: number;
  dripEndS?: number;
  fanDelayEndS?: number;
}

/** What the defrost cycle demands of the outputs this step. */
export interface DefrostOutputs {
  phase: DefrostPhase;
  /** Heaters (or hot gas) on: heated defrost, once the pump-down has stopped the compressor. */
  heat: boolean;
  /** Fans allowed to run. */
  fans: boolean;
  /** Compressor locked out (the defrost timer opens its circuit). */
  lockout: boolean;
  /** Liquid feed forced closed (defrost, drip) or forced open (fan delay: pull the coil down). */
  feed: 'closed' | 'open' | 'normal';
  /** What the controller reports as defrostOn. */
  defrostOn: boolean;
}

/** The defrost state machine; step() is called once per model step. */
export class DefrostCycle {
  phase: DefrostPhase = 'none';
  nextStartS: number;
  readonly history: DefrostRecord[] = [];
  private phaseStartS = 0;
  private current: DefrostRecord | null = null;

  constructor(
    public config: DefrostConfig,
    firstStartS: number,
  ) {
    this.nextStartS = firstStartS;
  }

  /** Starts a defrost now (manual or test); ignored while one is running. */
  startNow(tS: number): void {
    if (this.phase === 'none') this.begin(tS);
  }

  /** Advances the cycle to tS given the coil temperature (°C) as the controller reads it; null when its sensor has failed. */
  step(tS: number, coilC: number | null, compressorOn: boolean): DefrostOutputs {
    const c = this.config;
    const elapsedS = tS - this.phaseStartS;
    if (this.phase === 'none' && tS >= this.nextStartS) this.begin(tS);
    else if (this.phase === 'defrost' && this.current) {
      if (coilC !== null) this.current.maxCoilC = Math.max(this.current.maxCoilC, coilC);
      const heatedOrReachable = coilC !== null && coilC >= c.defrostTerminationC;
      if (heatedOrReachable) this.endDefrost(tS, 'temperature');
      else if (elapsedS >= c.defrostMaxMin * 60) this.endDefrost(tS, 'time');
    } else if (this.phase === 'drip' && elapsedS >= c.dripMin * 60) {
      if (this.current) this.current.dripEndS = tS;
      if (this.heated() && c.fanDelayMin > 0) this.enter('fan-delay', tS);
      else this.finish(tS);
    } else if (this.phase === 'fan-delay') {
      const cold = coilC !== null && coilC <= c.fanStartCoilC;
      if (cold || elapsedS >= c.fanDelayMin * 60) {
        if (this.current) this.current.fanDelayEndS = tS;
        this.finish(tS);
      }
    }
    return this.outputs(compressorOn);
  }

  private heated(): boolean {
    return this.config.defrostType !== 'off-cycle';
  }

  private begin(tS: number): void {
    this.current = { startS: tS, endS: Number.NaN, reason: 'time', maxCoilC: Number.NEGATIVE_INFINITY };
    this.nextStartS = tS + this.config.defrostIntervalH * 3600;
    this.enter('defrost', tS);
  }

  private endDefrost(tS: number, reason: DefrostEndReason): void {
    if (this.current) {
      this.current.endS = tS;
      this.current.reason = reason;
    }
    if (this.config.dripMin > 0) this.enter('drip', tS);
    else if (this.heated() && this.config.fanDelayMin > 0) this.enter('fan-delay', tS);
    else this.finish(tS);
  }

  private finish(tS: number): void {
    if (this.current) this.history.push(this.current);
    this.current = null;
    this.enter('none', tS);
  }

  private enter(phase: DefrostPhase, tS: number): void {
    this.phase = phase;
    this.phaseStartS = tS;
  }

  private outputs(compressorOn: boolean): DefrostOutputs {
    const heated = this.heated();
    switch (this.phase) {
      case 'none':
        return OUT_NONE;
      case 'defrost':
        return heated ? (compressorOn ? OUT_DEFROST_HEATED_PUMPING : OUT_DEFROST_HEATING) : OUT_DEFROST_OFF_CYCLE;
      case 'drip':
        return heated ? OUT_DRIP_HEATED : OUT_DRIP_OFF_CYCLE;
      case 'fan-delay':
        return OUT_FAN_DELAY;
    }
  }
}

// Every answer outputs() can give, made once: step() runs every model step, and a new object each
// time was measurable garbage. Frozen, so a caller cannot change what the next step returns.
const outputsOf = (o: DefrostOutputs): DefrostOutputs => Object.freeze(o);
const OUT_NONE = outputsOf({ phase: 'none', heat: false, fans: true, lockout: false, feed: 'normal', defrostOn: false });
/** Heated defrost: the heat waits until the pump-down has stopped the compressor; the fans stay off. */
const OUT_DEFROST_HEATED_PUMPING = outputsOf({ phase: 'defrost', heat: false, fans: false, lockout: true, feed: 'closed', defrostOn: true });
const OUT_DEFROST_HEATING = outputsOf({ phase: 'defrost', heat: true, fans: false, lockout: true, feed: 'closed', defrostOn: true });
/** Off-cycle defrost: no heat, the fans melt the frost with box air. */
const OUT_DEFROST_OFF_CYCLE = outputsOf({ phase: 'defrost', heat: false, fans: true, lockout: true, feed: 'closed', defrostOn: true });
const OUT_DRIP_HEATED = outputsOf({ phase: 'drip', heat: false, fans: false, lockout: true, feed: 'closed', defrostOn: true });
const OUT_DRIP_OFF_CYCLE = outputsOf({ phase: 'drip', heat: false, fans: true, lockout: true, feed: 'closed', defrostOn: true });
const OUT_FAN_DELAY = outputsOf({ phase: 'fan-delay', heat: false, fans: false, lockout: false, feed: 'open', defrostOn: false });
