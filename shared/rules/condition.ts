/**
 * The delay / deadband / clear-delay state machine every rule shares, and the per-reading context the
 * engine hands to each rule family. States are plain JSON objects so the engine can snapshot them.
 */
import type { AlarmPriority, AlarmRuleId, ConditionEvent, RuleBoxSettings } from '../alarms/types';
import type { EffectiveRule } from './defaults';

export const MIN_MS = 60_000;

/** One rule's condition: when it started being true (pending), whether it is raised, when it started clearing. */
export interface CondState {
  pendingSinceMs: number | null;
  active: boolean;
  clearSinceMs: number | null;
  priority: AlarmPriority;
}

/** A condition that is not raised and has no timer running. */
export function newCond(): CondState {
  return { pendingSinceMs: null, active: false, clearSinceMs: null, priority: 'low' };
}

/** bad: condition true; ok: clearly gone (past the deadband); hold: between the two, or not judged now. */
export type Verdict = 'bad' | 'ok' | 'hold';

/** Advances a condition at atMs (ms): returns 'raise' or 'clear' when it changes, null otherwise. */
export function stepCondition(s: CondState, verdict: Verdict, atMs: number, rule: EffectiveRule, raiseBlocked: boolean): 'raise' | 'clear' | null {
  if (verdict === 'bad') {
    s.clearSinceMs = null;
    if (s.active) return null;
    if (s.pendingSinceMs === null) s.pendingSinceMs = atMs;
    // Maintenance blocks the raise but the timer keeps running, so the alarm comes when it ends.
    if (!raiseBlocked && atMs - s.pendingSinceMs >= rule.delayMin * MIN_MS) {
      s.active = true;
      s.pendingSinceMs = null;
      s.priority = rule.priority;
      return 'raise';
    }
    return null;
  }
  if (verdict === 'ok') {
    s.pendingSinceMs = null;
    if (!s.active) return null;
    if (s.clearSinceMs === null) s.clearSinceMs = atMs;
    if (atMs - s.clearSinceMs >= rule.clearDelayMin * MIN_MS) {
      s.active = false;
      s.clearSinceMs = null;
      return 'clear';
    }
    return null;
  }
  if (s.active) s.clearSinceMs = null;
  else s.pendingSinceMs = null;
  return null;
}

/** Ends a condition (rule disabled): true when it was raised and so needs a clear event. */
export function resetCond(s: CondState): boolean {
  const was = s.active;
  s.active = false;
  s.pendingSinceMs = null;
  s.clearSinceMs = null;
  return was;
}

/** What the engine knows when a rule family evaluates a reading; one object, reused for every reading. */
export interface RuleContext {
  settings: RuleBoxSettings;
  rules: Record<AlarmRuleId, EffectiveRule>;
  /** Maintenance in force at this reading's time: conditions are tracked, nothing raises. */
  raiseBlocked: boolean;
  inDefrost: boolean;
  defrostStartMs: number | null;
  lastDefrostEndMs: number | null;
  /** This reading ended a defrost (defrostOn true → false). */
  defrostJustEnded: boolean;
  lastDefrostDurationMs: number;
  /** Highest coil-inlet temperature seen in the defrost that just ended or is running, °C (null: no coil sensor). */
  defrostMaxCoilC: number | null;
  compressorStarted: boolean;
  compressorStopped: boolean;
  compressorOnSinceMs: number | null;
  /** Records why a rule was not evaluated (last skip per rule). */
  skip(ruleId: AlarmRuleId, reason: string, atMs: number): void;
  /** Emits a condition event into the current answer. */
  emit(ev: ConditionEvent): void;
}

/** Emits raise/clear for a step result with the rule's priority (or the condition's own on clear). */
export function emitStep(
  ctx: RuleContext,
  ruleId: AlarmRuleId,
  s: CondState,
  change: 'raise' | 'clear' | null,
  atMs: number,
  value: number | null,
  raiseMessage: () => string,
  clearMessage: string,
): void {
  if (change === 'raise') ctx.emit({ ruleId, kind: 'raise', priority: s.priority, atMs, value, message: raiseMessage() });
  else if (change === 'clear') ctx.emit({ ruleId, kind: 'clear', priority: s.priority, atMs, value, message: clearMessage });
}

/** Applies a disabled rule: clears it if it was raised. Returns true when the rule is disabled. */
export function handleDisabled(ctx: RuleContext, ruleId: AlarmRuleId, s: CondState, atMs: number): boolean {
  if (ctx.rules[ruleId].enabled) return false;
  if (resetCond(s)) ctx.emit({ ruleId, kind: 'clear', priority: s.priority, atMs, value: null, message: 'The rule was turned off for this box.' });
  return true;
}

/** Formats a number with one decimal for messages. */
export function fmt1(x: number): string {
  return (Math.round(x * 10) / 10).toFixed(1);
}
