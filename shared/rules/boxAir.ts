/**
 * box-air-high and box-air-low. Box air is not product temperature: messages say so with the
 * standard food-safety caution (shared/safety.ts). box-air-high is held through defrost and a
 * recovery window after it (the box warms by design), and turns critical after 4 h continuously
 * above the limit (FDA Food Code 3-501.19(B), time as a public health control).
 */
import type { RuleReading } from '../alarms/types';
import { CAUTIONS } from '../safety';
import { MIN_MS, emitStep, fmt1, handleDisabled, newCond, stepCondition, type CondState, type RuleContext, type Verdict } from './condition';
import { DEFROST_RECOVERY_MIN, TIME_AS_CONTROL_MIN } from './defaults';
import { thermistorFault } from './sensors';

export interface BoxAirState {
  high: CondState;
  low: CondState;
  /** First reading of the current continuous run above the high limit (ms), for the 4-h escalation. */
  aboveSinceMs: number | null;
  escalated: boolean;
}

/** A fresh box-air state. */
export function newBoxAirState(): BoxAirState {
  return { high: newCond(), low: newCond(), aboveSinceMs: null, escalated: false };
}

const FOOD = CAUTIONS.foodSafety.text;

/** Evaluates both box-air rules for one reading. */
export function evalBoxAir(st: BoxAirState, ctx: RuleContext, r: RuleReading): void {
  const t = r.tsMs;
  if (thermistorFault(r.boxAirC) !== null) {
    // An off-scale sensor is a sensor-fault, not a warm box: hold both rules.
    ctx.skip('box-air-high', 'box-air sensor reads off-scale', t);
    ctx.skip('box-air-low', 'box-air sensor reads off-scale', t);
    stepCondition(st.high, 'hold', t, ctx.rules['box-air-high'], ctx.raiseBlocked);
    stepCondition(st.low, 'hold', t, ctx.rules['box-air-low'], ctx.raiseBlocked);
    return;
  }
  evalHigh(st, ctx, r);
  evalLow(st, ctx, r);
}

function evalHigh(st: BoxAirState, ctx: RuleContext, r: RuleReading): void {
  const t = r.tsMs;
  const rule = ctx.rules['box-air-high'];
  if (handleDisabled(ctx, 'box-air-high', st.high, t)) {
    st.aboveSinceMs = null;
    st.escalated = false;
    return;
  }
  const recovering = ctx.lastDefrostEndMs !== null && t - ctx.lastDefrostEndMs < DEFROST_RECOVERY_MIN * MIN_MS;
  const above = r.boxAirC > rule.threshold;
  if (!st.high.active && (ctx.inDefrost || recovering)) {
    // Suppressed by design: no raise, and the delay starts again after the recovery window.
    ctx.skip('box-air-high', ctx.inDefrost ? 'in defrost' : 'in the recovery window after defrost', t);
    stepCondition(st.high, 'hold', t, rule, ctx.raiseBlocked);
    st.aboveSinceMs = null;
    return;
  }
  if (above) st.aboveSinceMs ??= t;
  else st.aboveSinceMs = null;
  const verdict: Verdict = above ? 'bad' : r.boxAirC < rule.threshold - rule.deadband ? 'ok' : 'hold';
  const change = stepCondition(st.high, verdict, t, rule, ctx.raiseBlocked);
  if (change === 'clear') st.escalated = false;
  if (change !== null) {
    emitStep(ctx, 'box-air-high', st.high, change, t, r.boxAirC,
      () => `Box air ${fmt1(r.boxAirC)} °C is above the ${fmt1(rule.threshold)} °C limit for more than ${rule.delayMin} min. ${FOOD}`,
      `Box air is back below ${fmt1(rule.threshold - rule.deadband)} °C.`);
  }
  if (st.high.active && !st.escalated && st.aboveSinceMs !== null && t - st.aboveSinceMs >= TIME_AS_CONTROL_MIN * MIN_MS && rule.priority !== 'critical') {
    st.escalated = true;
    st.high.priority = 'critical';
    ctx.emit({
      ruleId: 'box-air-high',
      kind: 'priority',
      priority: 'critical',
      atMs: t,
      value: r.boxAirC,
      message: `Box air has been above ${fmt1(rule.threshold)} °C for 4 hours, the time limit of FDA Food Code 3-501.19. ${FOOD}`,
    });
  }
}

function evalLow(st: BoxAirState, ctx: RuleContext, r: RuleReading): void {
  const t = r.tsMs;
  const rule = ctx.rules['box-air-low'];
  if (handleDisabled(ctx, 'box-air-low', st.low, t)) return;
  const verdict: Verdict = r.boxAirC < rule.threshold ? 'bad' : r.boxAirC > rule.threshold + rule.deadband ? 'ok' : 'hold';
  const change = stepCondition(st.low, verdict, t, rule, ctx.raiseBlocked);
  if (change !== null) {
    emitStep(ctx, 'box-air-low', st.low, change, t, r.boxAirC,
      () => `Box air ${fmt1(r.boxAirC)} °C is below the ${fmt1(rule.threshold)} °C low limit for more than ${rule.delayMin} min: product may freeze. ${FOOD}`,
      `Box air is back above ${fmt1(rule.threshold + rule.deadband)} °C.`);
  }
}
