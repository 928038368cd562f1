/**
 * One walk-in box with its refrigeration system and controller, stepped in simulated seconds.
 * Pure and deterministic: all randomness comes from the seed, time only from step(dtS).
 * Physics is in physics.ts; this file holds the controller's logic and the public surface.
 */
import type { TelemetryPayload } from '../../shared/schemas/telemetry';
import { DefrostCycle } from './defrost';
import {
  DEFAULT_FAULT_THERMISTOR,
  DRIFT_K_PER_H,
  DRIFT_MAX_K,
  OPEN_THERMISTOR_C,
  SENSOR_FAULTS,
  SEVERE_LEAK_OPEN_FRACTION,
  SHORTED_THERMISTOR_C,
  SHORT_CYCLE_CUTOUT_BELOW_SETPOINT_K,
  SHORT_CYCLE_DIFFERENTIAL_K,
  SHORT_CYCLE_LP_DIFFERENTIAL_KPA,
  type ActiveFault,
  type FaultName,
  type ThermistorName,
} from './faults';
import { Fluid } from './fluid';
import type { BoxModelParams, BoxSettings } from './params';
import { PhysicalState, stepPhysics, type ControlOutputs } from './physics';
import { SeededRng } from './rng';
import { Disturbances, ambientC, hourOfDay } from './schedule';
import { SteppedValve, ThermostaticValve, type EevMode } from './valve';

/** Telemetry fields a box reports (the controller adds seq and ts). */
export type BoxReading = Omit<TelemetryPayload, 'seq' | 'ts'>;

/** Why the compressor stopped. */
export type StopReason = 'lp-cutout' | 'pumpdown-timeout';

export interface CompressorEvent {
  tS: number;
  kind: 'start' | 'stop';
  /** Thermostat calling at that moment (a start without a call is a restart on pressure). */
  call: boolean;
  suctionKPaG: number;
  valveFraction: number;
  /** A defrost cycle was in progress (its start pumps the coil down too). */
  inDefrost: boolean;
  reason?: StopReason;
}

/** A reading below/above these is an off-scale (failed) thermistor to the controller, °C. */
const SENSOR_FAILED_BELOW_C = -55;
const SENSOR_FAILED_ABOVE_C = 125;
/** With its box-air sensor failed the controller runs a fixed duty: 15 min of every 30 (our choice). */
const FALLBACK_PERIOD_S = 1800;
const FALLBACK_ON_S = 900;
/** The EEV mode of a closed feed (shared: it has no fields to change). */
const CLOSED_MODE: EevMode = { kind: 'closed' };
/** Pressure the low side creeps to after a pump-down with a tight valve, kPa above the cut-out (our choice). */
const CREEP_ABOVE_CUTOUT_KPA = 25;
const MAX_EVENTS = 5000;
/** The low-pressure cut-out is bypassed for the first minute of a run, as a low-ambient start timer does (common practice; 60 s our choice). */
const LP_START_BYPASS_S = 60;

/** One simulated box; see simulator/README.md for the model. */
export class BoxModel {
  readonly params: BoxModelParams;
  fluid: Fluid;
  readonly phys: PhysicalState;
  readonly defrost: DefrostCycle;
  readonly faults = new Map<FaultName, ActiveFault>();
  readonly events: CompressorEvent[] = [];
  tS = 0;
  call = false;
  /** The controller's liquid feed command (valve or solenoid told to pass liquid). */
  private feedCommanded = false;
  compressorOn = false;
  fanOn = true;
  defrostOn = false;
  heaterOn = false;
  compressorStarts = 0;
  compressorRunS = 0;
  private readonly eev: SteppedValve | null;
  private readonly txv: ThermostaticValve | null;
  private readonly disturbances: Disturbances;
  private readonly noise: SeededRng;
  private feedOpenSinceS = -Infinity;
  private feedClosedSinceS = 0;
  private compressorSinceS = -Infinity;
  private ratedKPaAbs = 0;
  /** Liquid-to-suction pressure difference at rated conditions, kPa (the valve's capacity is stated there). */
  designValveDeltaKPa = 1;
  private lp = { cutOutKPaG: 0, cutInKPaG: 0 };
  /** What control() hands the physics, reused every step (the physics reads it within the step only). */
  private readonly controlOut: ControlOutputs = { heat: false, fansMoveAir: true };
  /** The EEV modes driveValve() asks for, reused every step (the valve reads them within its update only). */
  private readonly holdMode = { kind: 'hold' as const, fraction: 0 };
  private readonly piMode = { kind: 'pi' as const, superheatK: 0, targetK: 0 };

  constructor(params: BoxModelParams, seed: number) {
    this.params = { ...params };
    const rng = new SeededRng(seed);
    this.disturbances = new Disturbances(
      rng.fork(1),
      params.doorPeakPerH,
      params.doorMeanOpenS,
      params.deliveriesPerDay,
      params.deliveryKgMax,
      params.deliveryWarmK,
    );
    this.noise = rng.fork(2);
    this.fluid = new Fluid(params.refrigerant, params.elevationM);
    this.refreshDerived();
    const startC = params.setpointC + params.differentialK / 2;
    const creepKPa = Math.min(this.fluid.toAbsoluteKPa(this.lp.cutOutKPaG) + CREEP_ABOVE_CUTOUT_KPA, this.fluid.dewKPaAbs(startC));
    this.phys = new PhysicalState(startC, ambientC(params.ambientMeanC, params.ambientSwingK, this.hour()), creepKPa);
    this.phys.liquidKPaAbs = this.fluid.bubbleKPaAbs(Math.min(this.phys.condensingC, this.fluid.maxC - 0.5));
    this.compressorSinceS = -params.minOffS;
    this.eev = params.valveType === 'eev'
      ? new SteppedValve({ fullSteps: params.valveFullSteps, kpPerK: params.eevKpPerK, tiS: params.eevTiS, maxStepsPerS: params.eevMaxStepsPerS })
      : null;
    this.txv = params.valveType === 'txv'
      ? new ThermostaticValve(Math.max(1, params.superheatTargetK - 2), params.txvGradientK, params.txvBulbTauS, startC)
      : null;
    const firstDefrostS = rng.fork(3).uniform(0.3, 1) * params.defrostIntervalH * 3600;
    this.defrost = new DefrostCycle({ ...params, fanStartCoilC: params.fanStartCoilC }, firstDefrostS);
  }

  /** Low-pressure control settings in force, kPa(g). */
  get lpSettings(): { cutOutKPaG: number; cutInKPaG: number } {
    return { ...this.lp };
  }

  /** Liquid reaches the coil: the feed is commanded open, or a badly leaking seat passes it anyway. */
  get feedOpen(): boolean {
    return this.feedCommanded || (this.faults.size > 0 && this.faults.has('valve-leak-through-severe'));
  }

  /** Valve opening as the refrigerant sees it, fraction of full travel (EEV steps / full steps, or the TXV's lift; a badly leaking seat passes at least SEVERE_LEAK_OPEN_FRACTION). */
  get valveFraction(): number {
    const commanded = this.eev ? this.eev.fraction : (this.txv?.fraction ?? 0);
    return this.faults.size > 0 && this.faults.has('valve-leak-through-severe') ? Math.max(commanded, SEVERE_LEAK_OPEN_FRACTION) : commanded;
  }

  /** EEV position, steps (undefined for a TXV box). */
  get valveSteps(): number | undefined {
    return this.eev?.steps;
  }

  /** True evaporator-outlet superheat, K (suction line minus dew point at suction pressure). */
  get superheatK(): number {
    return this.phys.suctionLineC - this.fluid.dewC(this.phys.suctionKPaAbs);
  }

  /** True suction pressure at this site, kPa(g). */
  get suctionKPaG(): number {
    return this.fluid.toGaugeKPa(this.phys.suctionKPaAbs);
  }

  /** Turns a fault on or off; sensor faults take the thermistor they hit (default: suction line). */
  setFault(name: FaultName, on: boolean, sensor?: ThermistorName): void {
    if (on) {
      const hit = SENSOR_FAULTS.includes(name) ? (sensor ?? DEFAULT_FAULT_THERMISTOR) : undefined;
      // A stuck sensor keeps the value it read when it stuck.
      const heldC = name === 'sensor-stuck' && hit ? quantise(this.trueSensorC(hit), 0.1) : undefined;
      this.faults.set(name, { sinceS: this.tS, sensor: hit, ...(heldC !== undefined ? { heldC } : {}) });
    } else this.faults.delete(name);
    this.refreshDerived();
  }

  /** Applies already-validated settings (see settings.ts for what may be applied). */
  applySettings(patch: Partial<BoxSettings>): void {
    Object.assign(this.params, patch);
    if (patch.refrigerant !== undefined) this.fluid = new Fluid(patch.refrigerant, this.params.elevationM);
    this.defrost.config = { ...this.params, fanStartCoilC: this.params.fanStartCoilC };
    this.refreshDerived();
  }

  /** Advances the model by dtS simulated seconds (split into steps of ≤ 2 s, which keeps the explicit integration stable). */
  step(dtS: number): void {
    const h = Math.min(dtS, 2);
    for (let done = 0; done < dtS - 1e-9; done += h) this.stepOnce(Math.min(h, dtS - done));
  }

  /** Hour of day of the model clock. */
  hour(): number {
    return hourOfDay(this.params.startEpochMs, this.tS);
  }

  /** What the controller's inputs read now: noise and 0.1 °C / 1 kPa quantisation, sensor faults applied. */
  reading(): BoxReading {
    const p = this.phys;
    const t = (name: ThermistorName, trueC: number) => {
      const faulted = this.faultedSensorC(name);
      if (faulted !== null) return faulted;
      return quantise(Math.min(SHORTED_THERMISTOR_C, Math.max(OPEN_THERMISTOR_C, trueC + this.driftK(name) + this.noise.normal(0, this.params.tempNoiseSdK))), 0.1);
    };
    const kPa = (trueKPaG: number) => Math.round(trueKPaG + this.noise.normal(0, this.params.pressureNoiseSdKPa)) + 0;
    const out: BoxReading = {
      suctionKPaG: kPa(this.suctionKPaG),
      suctionLineC: t('suctionLineC', p.suctionLineC),
      boxAirC: t('boxAirC', p.airC),
      coilInletC: t('coilInletC', p.coilInletC),
      dischargeAirC: t('dischargeAirC', p.dischargeAirC(this.fansMoveAir())),
      liquidKPaG: kPa(this.fluid.toGaugeKPa(p.liquidKPaAbs)),
      liquidLineC: t('liquidLineC', p.liquidLineC),
      compressorOn: this.compressorOn,
      fanOn: this.fanOn,
      defrostOn: this.defrostOn,
      doorOpen: p.doorOpen,
    };
    if (this.eev) out.valveSteps = this.eev.steps;
    return out;
  }

  private stepOnce(dtS: number): void {
    this.tS += dtS;
    const hour = this.hour();
    const delivery = this.disturbances.step(this.tS, dtS, hour);
    const outputs = this.control(dtS);
    stepPhysics(this, outputs, dtS, hour, delivery, this.disturbances.doorOpenAt(this.tS), this.disturbances.feedJitter);
    if (this.compressorOn) this.compressorRunS += dtS;
  }

  /** The controller: thermostat, defrost, low-pressure switch, valve. */
  private control(dtS: number): ControlOutputs {
    const p = this.params;
    const boxC = this.sensedC('boxAirC', this.phys.airC);
    const differentialK = this.faults.size > 0 && this.faults.has('short-cycling') ? SHORT_CYCLE_DIFFERENTIAL_K : p.differentialK;
    if (boxC === null) this.call = this.tS % FALLBACK_PERIOD_S < FALLBACK_ON_S;
    else if (boxC >= p.setpointC + differentialK) this.call = true;
    else if (boxC <= p.setpointC) this.call = false;

    // Defrost termination and fan delay use the controller's fin probe (coil metal), not the inlet thermistor.
    const d = this.defrost.step(this.tS, this.phys.coilC, this.compressorOn);
    const minOnHeld = this.feedCommanded && this.tS - this.feedOpenSinceS < p.minOnS;
    const wantFeed = d.feed === 'open' || (d.feed === 'normal' && (this.call || minOnHeld));
    if (wantFeed && !this.feedCommanded) this.feedOpenSinceS = this.tS;
    if (!wantFeed && this.feedCommanded) this.feedClosedSinceS = this.tS;
    this.feedCommanded = wantFeed;

    const pG = this.suctionKPaG;
    if (this.compressorOn) {
      const pumpDownS = this.tS - Math.max(this.feedClosedSinceS, this.compressorSinceS);
      const bypassed = this.tS - this.compressorSinceS < LP_START_BYPASS_S;
      if (pG <= this.lp.cutOutKPaG && !bypassed) this.switchCompressor(false, pG, 'lp-cutout');
      else if (!this.feedCommanded && pumpDownS > p.pumpDownMaxS) this.switchCompressor(false, pG, 'pumpdown-timeout');
    } else if (!d.lockout && pG >= this.lp.cutInKPaG && this.tS - this.compressorSinceS >= p.minOffS && this.valveReady()) {
      this.switchCompressor(true, pG);
    }

    this.fanOn = d.fans;
    this.defrostOn = d.defrostOn;
    this.heaterOn = d.heat;
    this.driveValve(dtS);
    const out = this.controlOut;
    out.heat = d.heat;
    out.fansMoveAir = this.fansMoveAir();
    return out;
  }

  /** An EEV controller starts the compressor only once the valve has reached its start opening. */
  private valveReady(): boolean {
    return !this.eev || !this.feedCommanded || this.eev.fraction >= 0.95 * this.params.eevStartFraction;
  }

  private driveValve(dtS: number): void {
    if (this.txv) {
      this.txv.update(dtS, this.phys.suctionLineC, this.fluid.dewC(this.phys.suctionKPaAbs), this.feedCommanded);
      return;
    }
    if (!this.eev) return;
    const p = this.params;
    let mode: EevMode;
    const lineC = this.sensedC('suctionLineC', this.phys.suctionLineC);
    if (!this.feedCommanded) mode = CLOSED_MODE;
    else if (!this.compressorOn || this.tS - this.compressorSinceS < p.eevStartHoldS) mode = this.hold(p.eevStartFraction);
    else if (lineC === null) mode = this.hold(p.eevFallbackFraction);
    else {
      this.piMode.superheatK = lineC - this.fluid.dewC(this.phys.suctionKPaAbs);
      this.piMode.targetK = p.superheatTargetK;
      mode = this.piMode;
    }
    this.eev.update(dtS, mode);
  }

  private hold(fraction: number): EevMode {
    this.holdMode.fraction = fraction;
    return this.holdMode;
  }

  private switchCompressor(on: boolean, suctionKPaG: number, reason?: StopReason): void {
    this.compressorOn = on;
    this.compressorSinceS = this.tS;
    if (on) this.compressorStarts += 1;
    if (this.events.length >= MAX_EVENTS) this.events.shift();
    this.events.push({ tS: this.tS, kind: on ? 'start' : 'stop', call: this.call, suctionKPaG, valveFraction: this.valveFraction, inDefrost: this.defrost.phase !== 'none', reason });
  }

  /** Fans turning and moving air (a failed fan motor moves none even when commanded on). */
  fansMoveAir(): boolean {
    return this.fanOn && !(this.faults.size > 0 && this.faults.has('evap-fan-failed'));
  }

  /** Rated compressor suction pressure, kPa abs, for the current refrigerant. */
  get ratedSuctionKPaAbs(): number {
    return this.ratedKPaAbs;
  }

  /** What the controller reads from a thermistor, °C; null when off-scale (failed). */
  private sensedC(name: ThermistorName, trueC: number): number | null {
    const v = this.faultedSensorC(name) ?? trueC + this.driftK(name);
    return v <= SENSOR_FAILED_BELOW_C || v >= SENSOR_FAILED_ABOVE_C ? null : v;
  }

  private faultedSensorC(name: ThermistorName): number | null {
    if (this.faults.size === 0) return null;
    if (this.faults.get('thermistor-open')?.sensor === name) return OPEN_THERMISTOR_C;
    if (this.faults.get('thermistor-shorted')?.sensor === name) return SHORTED_THERMISTOR_C;
    const stuck = this.faults.get('sensor-stuck');
    if (stuck?.sensor === name && stuck.heldC !== undefined) return stuck.heldC;
    return null;
  }

  /** How far a drifting thermistor reads above the truth now, K (0 for the others). */
  private driftK(name: ThermistorName): number {
    if (this.faults.size === 0) return 0;
    const drift = this.faults.get('sensor-drift');
    if (drift?.sensor !== name) return 0;
    return Math.min(DRIFT_MAX_K, (DRIFT_K_PER_H * (this.tS - drift.sinceS)) / 3600);
  }

  /** The true temperature at a thermistor's place, °C. */
  private trueSensorC(name: ThermistorName): number {
    const p = this.phys;
    switch (name) {
      case 'boxAirC':
        return p.airC;
      case 'suctionLineC':
        return p.suctionLineC;
      case 'coilInletC':
        return p.coilInletC;
      case 'dischargeAirC':
        return p.dischargeAirC(this.fansMoveAir());
      case 'liquidLineC':
        return p.liquidLineC;
    }
  }

  private refreshDerived(): void {
    const p = this.params;
    const f = this.fluid;
    this.ratedKPaAbs = f.dewKPaAbs(p.ratedEvaporatingC);
    const designCondC = Math.min(p.ambientMeanC + p.condensingAboveAmbientK, f.maxC - 0.5);
    this.designValveDeltaKPa = Math.max(50, f.bubbleKPaAbs(designCondC) - this.ratedKPaAbs);
    // Keep the cut-out below normal suction for any refrigerant: at most saturation 10 K under rated evaporating.
    const normalCutOut = Math.min(p.lpCutOutKPaG, f.toGaugeKPa(f.dewKPaAbs(p.ratedEvaporatingC - 10)));
    if (this.faults.has('short-cycling')) {
      const cutOut = f.toGaugeKPa(f.dewKPaAbs(p.setpointC - SHORT_CYCLE_CUTOUT_BELOW_SETPOINT_K));
      this.lp = { cutOutKPaG: cutOut, cutInKPaG: cutOut + SHORT_CYCLE_LP_DIFFERENTIAL_KPA };
    } else {
      const cutIn = Math.max(f.toGaugeKPa(f.dewKPaAbs(p.setpointC - p.lpCutInBelowSetpointK)), normalCutOut + p.lpMinDifferentialKPa);
      this.lp = { cutOutKPaG: normalCutOut, cutInKPaG: cutIn };
    }
  }

  /** Creep target of a tightly closed, pumped-down low side, kPa abs. */
  creepKPaAbs(): number {
    return this.fluid.toAbsoluteKPa(this.lp.cutOutKPaG) + CREEP_ABOVE_CUTOUT_KPA;
  }
}

/** x rounded to the nearest multiple of stepSize (and −0 turned into 0). */
export function quantise(x: number, stepSize: number): number {
  return Math.round(Math.round(x / stepSize) * stepSize * 1000) / 1000 + 0;
}
