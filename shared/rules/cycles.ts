/**
 * Rules on the refrigeration cycle: defrost-overtime, defrost-timed-termination, door-open,
 * short-cycling, long-run and pump-down-failure. Signatures from TRADE-NOTES §2/§4 (ACHR 142618:
 * a pump-down should not keep short-cycling; a leaking solenoid or valve restarts the compressor on
 * the low-pressure switch with no call). Ring buffers are bounded so each reading costs O(1).
 */
import type { RuleReading } from '../alarms/types';
import { MIN_MS, emitStep, fmt1, handleDisabled, newCond, stepCondition, type CondState, type RuleContext, type Verdict } from './condition';
import { DEFROST_RECOVERY_MIN } from './defaults';

/** Window of the start count, min (starts per hour). */
const START_WINDOW_MIN = 60;
/** Window in which failed pump-downs and uncalled restarts are counted, min (our choice). */
const PUMP_DOWN_WINDOW_MIN = 120;
/** Longest a pump-down may take before it counts as failed, min: "a few minutes", common practice (pump-down to the LP cut-out is quick on a tight valve). */
export const PUMP_DOWN_ALLOWED_MIN = 2.5;
/** Suction above the cut-out by more than this is "not reached", kPa: our choice (noise, 10-s sampling). */
const PUMP_DOWN_TOLERANCE_KPA = 5;
/** Valve at or below this is closed, %. */
const VALVE_CLOSED_PERCENT = 1;
/** Ring buffers never hold more than this many times (well above every threshold). */
const RING_MAX = 64;

export interface CyclesState {
  overtime: CondState;
  timed: CondState;
  door: CondState;
  shortCycle: CondState;
  longRun: CondState;
  pumpDown: CondState;
  timedInARow: number;
  /** Compressor start times in the last hour, ms, oldest first. */
  starts: number[];
  /** Failed pump-downs and uncalled restarts in the window, ms, oldest first. */
  pumpDownFailures: number[];
  pumpDownSinceMs: number | null;
  pumpDownMinKPaG: number;
  pumpDownCounted: boolean;
}

/** A fresh cycle-rules state. */
export function newCyclesState(): CyclesState {
  return {
    overtime: newCond(),
    timed: newCond(),
    door: newCond(),
    shortCycle: newCond(),
    longRun: newCond(),
    pumpDown: newCond(),
    timedInARow: 0,
    starts: [],
    pumpDownFailures: [],
    pumpDownSinceMs: null,
    pumpDownMinKPaG: 0,
    pumpDownCounted: false,
  };
}

function pushBounded(ring: number[], t: number): void {
  if (ring.length >= RING_MAX) ring.shift();
  ring.push(t);
}

function dropOlder(ring: number[], cutoffMs: number): void {
  while (ring.length > 0 && (ring[0] ?? 0) < cutoffMs) ring.shift();
}

/** Evaluates every cycle rule for one reading. */
export function evalCycles(st: CyclesState, ctx: RuleContext, r: RuleReading): void {
  defrostOvertime(st, ctx, r);
  timedTermination(st, ctx, r);
  doorOpen(st, ctx, r);
  shortCycling(st, ctx, r);
  longRun(st, ctx, r);
  pumpDown(st, ctx, r);
}

function defrostOvertime(st: CyclesState, ctx: RuleContext, r: RuleReading): void {
  const t = r.tsMs;
  if (handleDisabled(ctx, 'defrost-overtime', st.overtime, t)) return;
  const rule = ctx.rules['defrost-overtime'];
  const elapsedMin = ctx.inDefrost && ctx.defrostStartMs !== null ? (t - ctx.defrostStartMs) / MIN_MS : 0;
  const v: Verdict = !ctx.inDefrost ? 'ok' : elapsedMin > rule.threshold ? 'bad' : 'hold';
  const change = stepCondition(st.overtime, v, t, rule, ctx.raiseBlocked);
  if (change !== null) {
    emitStep(ctx, 'defrost-overtime', st.overtime, change, t, Math.round(elapsedMin),
      () => `Defrost has run ${Math.round(elapsedMin)} min, past its ${rule.threshold} min limit: check the defrost timer and termination.`,
      'The defrost has ended.');
  }
}

function timedTermination(st: CyclesState, ctx: RuleContext, r: RuleReading): void {
  const t = r.tsMs;
  if (handleDisabled(ctx, 'defrost-timed-termination', st.timed, t)) return;
  if (!ctx.defrostJustEnded) return;
  const s = ctx.settings;
  // Ended on time: it lasted its limit (one reading of slack) and the coil never reached the termination temperature.
  const lastedLimit = ctx.lastDefrostDurationMs >= (s.defrostMaxMin - 0.5) * MIN_MS;
  const coilCold = ctx.defrostMaxCoilC === null || ctx.defrostMaxCoilC < s.defrostTerminationC;
  st.timedInARow = lastedLimit && coilCold ? st.timedInARow + 1 : 0;
  const rule = ctx.rules['defrost-timed-termination'];
  const change = stepCondition(st.timed, st.timedInARow >= rule.threshold ? 'bad' : 'ok', t, rule, ctx.raiseBlocked);
  const coil = ctx.defrostMaxCoilC;
  if (change !== null) {
    emitStep(ctx, 'defrost-timed-termination', st.timed, change, t, st.timedInARow,
      () =>
        `The last ${st.timedInARow} defrosts ended on their time limit with the coil below ${fmt1(s.defrostTerminationC)} °C` +
        (coil !== null ? ` (highest ${fmt1(coil)} °C)` : '') + ': check the heaters and the termination sensor.',
      'A defrost ended on temperature again.');
  }
}

function doorOpen(st: CyclesState, ctx: RuleContext, r: RuleReading): void {
  const t = r.tsMs;
  if (handleDisabled(ctx, 'door-open', st.door, t)) return;
  const rule = ctx.rules['door-open'];
  const change = stepCondition(st.door, r.doorOpen ? 'bad' : 'ok', t, rule, ctx.raiseBlocked);
  if (change !== null) emitStep(ctx, 'door-open', st.door, change, t, null, () => `The door has been open for more than ${rule.delayMin} min.`, 'The door is closed.');
}

function shortCycling(st: CyclesState, ctx: RuleContext, r: RuleReading): void {
  const t = r.tsMs;
  // Starts are counted even while the rule is off so that turning it on sees the last hour.
  if (ctx.compressorStarted && !ctx.inDefrost) pushBounded(st.starts, t);
  dropOlder(st.starts, t - START_WINDOW_MIN * MIN_MS);
  if (handleDisabled(ctx, 'short-cycling', st.shortCycle, t)) return;
  const rule = ctx.rules['short-cycling'];
  const n = st.starts.length;
  const v: Verdict = n > rule.threshold ? 'bad' : n <= rule.threshold - rule.deadband ? 'ok' : 'hold';
  const change = stepCondition(st.shortCycle, v, t, rule, ctx.raiseBlocked);
  if (change !== null) {
    emitStep(ctx, 'short-cycling', st.shortCycle, change, t, n,
      () => `The compressor started ${n} times in the last hour (more than ${rule.threshold}): check the low-pressure control, the charge and the liquid-line solenoid.`,
      'Compressor starts per hour are back to normal.');
  }
}

function longRun(st: CyclesState, ctx: RuleContext, r: RuleReading): void {
  const t = r.tsMs;
  if (handleDisabled(ctx, 'long-run', st.longRun, t)) return;
  const rule = ctx.rules['long-run'];
  const on = r.compressorOn && ctx.compressorOnSinceMs !== null;
  const runMin = on && ctx.compressorOnSinceMs !== null ? (t - ctx.compressorOnSinceMs) / MIN_MS : 0;
  const warm = r.boxAirC > ctx.settings.setpointC;
  const v: Verdict = !on || !warm ? 'ok' : runMin >= rule.threshold ? 'bad' : 'hold';
  const change = stepCondition(st.longRun, v, t, rule, ctx.raiseBlocked);
  if (change !== null) {
    emitStep(ctx, 'long-run', st.longRun, change, t, Math.round(runMin),
      () => `The compressor has run ${Math.round(runMin)} min without a stop and box air is still above setpoint: check the charge, the condenser and the door.`,
      'The compressor has stopped or the box reached setpoint.');
  }
}

function pumpDown(st: CyclesState, ctx: RuleContext, r: RuleReading): void {
  const t = r.tsMs;
  const s = ctx.settings;
  const rule = ctx.rules['pump-down-failure'];
  // 1. A pump-down (valve closed, compressor on) that does not reach the cut-out in time.
  const cutOut = s.pumpDownCutOutKPaG;
  const closed = r.valvePercent !== null && r.valvePercent <= VALVE_CLOSED_PERCENT;
  if (cutOut === null || r.valvePercent === null) {
    ctx.skip('pump-down-failure', cutOut === null ? 'no pump-down cut-out set: only restarts without a call are checked' : 'no valve position: only restarts without a call are checked', t);
    st.pumpDownSinceMs = null;
  } else if (r.compressorOn && closed) {
    if (st.pumpDownSinceMs === null) {
      st.pumpDownSinceMs = t;
      st.pumpDownMinKPaG = r.suctionKPaG;
      st.pumpDownCounted = false;
    } else st.pumpDownMinKPaG = Math.min(st.pumpDownMinKPaG, r.suctionKPaG);
    const tooLong = t - st.pumpDownSinceMs >= PUMP_DOWN_ALLOWED_MIN * MIN_MS;
    if (!st.pumpDownCounted && tooLong && st.pumpDownMinKPaG > cutOut + PUMP_DOWN_TOLERANCE_KPA) {
      st.pumpDownCounted = true;
      pushBounded(st.pumpDownFailures, t);
    }
  } else st.pumpDownSinceMs = null;
  // 2. A restart with no call, out of defrost and its recovery: the compressor starts with the valve still
  // closed (an EEV controller opens it before a called start), or with box air below setpoint minus the
  // rule's deadband (K; set it to half the differential for a thermostat centred on its setpoint).
  const recovering = ctx.lastDefrostEndMs !== null && t - ctx.lastDefrostEndMs < DEFROST_RECOVERY_MIN * MIN_MS;
  const uncalled = closed || r.boxAirC < s.setpointC - rule.deadband;
  if (ctx.compressorStarted && !ctx.inDefrost && !recovering && uncalled) pushBounded(st.pumpDownFailures, t);
  dropOlder(st.pumpDownFailures, t - PUMP_DOWN_WINDOW_MIN * MIN_MS);
  if (handleDisabled(ctx, 'pump-down-failure', st.pumpDown, t)) return;
  const n = st.pumpDownFailures.length;
  const v: Verdict = n > rule.threshold ? 'bad' : n === 0 ? 'ok' : 'hold';
  const change = stepCondition(st.pumpDown, v, t, rule, ctx.raiseBlocked);
  if (change !== null) {
    emitStep(ctx, 'pump-down-failure', st.pumpDown, change, t, n,
      () => `${n} failed pump-downs or restarts without a call in the last ${PUMP_DOWN_WINDOW_MIN / 60} h: the liquid-line solenoid or the valve may leak through.`,
      'No failed pump-down or uncalled restart in the last 2 h.');
  }
}
