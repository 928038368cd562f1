/**
 * superheat-low and superheat-high for EEV boxes, judged against the box's superheat target, only
 * while the compressor runs, out of defrost and past the pull-down after a start. TXV boxes and
 * readings without a valid superheat are skipped with the reason recorded.
 */
import type { RuleReading } from '../alarms/types';
import { MIN_MS, emitStep, fmt1, handleDisabled, newCond, stepCondition, type CondState, type RuleContext, type Verdict } from './condition';
import { SUPERHEAT_START_IGNORE_MIN, VALVE_NEAR_OPEN_PERCENT } from './defaults';
import { thermistorFault } from './sensors';

export interface SuperheatState {
  low: CondState;
  high: CondState;
}

/** A fresh superheat state. */
export function newSuperheatState(): SuperheatState {
  return { low: newCond(), high: newCond() };
}

/** Why superheat cannot be judged in this reading, or null when it can. */
function skipReason(ctx: RuleContext, r: RuleReading): string | null {
  if (ctx.settings.valveType === 'txv') return 'TXV box: the valve is not controlled, superheat is not judged against a target';
  if (r.superheatK === null) return 'no valid superheat in this reading';
  if (thermistorFault(r.suctionLineC) !== null) return 'suction-line sensor reads off-scale';
  if (ctx.inDefrost) return 'in defrost';
  if (!r.compressorOn || ctx.compressorOnSinceMs === null) return 'compressor off';
  if (r.tsMs - ctx.compressorOnSinceMs < SUPERHEAT_START_IGNORE_MIN * MIN_MS) return 'pull-down after compressor start';
  return null;
}

/** Evaluates both superheat rules for one reading. */
export function evalSuperheat(st: SuperheatState, ctx: RuleContext, r: RuleReading): void {
  const t = r.tsMs;
  const lowOff = handleDisabled(ctx, 'superheat-low', st.low, t);
  const highOff = handleDisabled(ctx, 'superheat-high', st.high, t);
  if (lowOff && highOff) return;
  const reason = skipReason(ctx, r);
  const lowRule = ctx.rules['superheat-low'];
  const highRule = ctx.rules['superheat-high'];
  if (reason !== null || r.superheatK === null) {
    if (!lowOff) {
      ctx.skip('superheat-low', reason ?? 'no valid superheat in this reading', t);
      stepCondition(st.low, 'hold', t, lowRule, ctx.raiseBlocked);
    }
    if (!highOff) {
      ctx.skip('superheat-high', reason ?? 'no valid superheat in this reading', t);
      stepCondition(st.high, 'hold', t, highRule, ctx.raiseBlocked);
    }
    return;
  }
  const sh = r.superheatK;
  if (!lowOff) {
    const v: Verdict = sh < lowRule.threshold ? 'bad' : sh > lowRule.threshold + lowRule.deadband ? 'ok' : 'hold';
    const change = stepCondition(st.low, v, t, lowRule, ctx.raiseBlocked);
    if (change !== null) {
      emitStep(ctx, 'superheat-low', st.low, change, t, sh,
        () => `Superheat ${fmt1(sh)} K is below ${fmt1(lowRule.threshold)} K while the compressor runs: liquid may reach the compressor (overfeeding, a leaking valve or a loose suction-line sensor).`,
        'Superheat is back in its band.');
    }
  }
  if (!highOff) {
    const v: Verdict = sh > highRule.threshold ? 'bad' : sh < highRule.threshold - highRule.deadband ? 'ok' : 'hold';
    const change = stepCondition(st.high, v, t, highRule, ctx.raiseBlocked);
    if (change !== null) {
      const open = r.valvePercent !== null && r.valvePercent >= VALVE_NEAR_OPEN_PERCENT;
      emitStep(ctx, 'superheat-high', st.high, change, t, sh,
        () =>
          `Superheat ${fmt1(sh)} K is above ${fmt1(highRule.threshold)} K while the compressor runs.` +
          (open ? ` With the valve ${Math.round(r.valvePercent ?? 0)} % open this points to a low charge or a restriction in the liquid line.` : ''),
        'Superheat is back in its band.');
    }
  }
}
