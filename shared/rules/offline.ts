/**
 * controller-offline: the only rule on wall-clock time. Raised in a tick when nothing has been heard
 * from the controller for threshold × reportIntervalS (3 missed reports), or at once on its MQTT last
 * will; cleared by the next reading or an online status.
 */
import type { ConditionEvent } from '../alarms/types';
import { MIN_MS, handleDisabled, newCond, resetCond, stepCondition, type CondState, type RuleContext } from './condition';

export interface OfflineState {
  cond: CondState;
  /** Wall time the controller was last heard from (reading or online status), ms; null before the first. */
  lastSeenMs: number | null;
  /** The broker delivered the controller's last will (offline status). */
  lastWill: boolean;
}

/** A fresh offline state. */
export function newOfflineState(): OfflineState {
  return { cond: newCond(), lastSeenMs: null, lastWill: false };
}

function raiseEvent(st: OfflineState, atMs: number, silentMin: number): ConditionEvent {
  const message = st.lastWill
    ? 'The controller went offline (its connection to the broker was lost).'
    : `No reading from the controller for ${Math.round(silentMin)} min.`;
  return { ruleId: 'controller-offline', kind: 'raise', priority: st.cond.priority, atMs, value: Math.round(silentMin), message };
}

/** The controller was heard from at atMs (wall time, ms): clears the alarm if it was raised. */
export function offlineHeard(st: OfflineState, ctx: RuleContext, atMs: number): void {
  st.lastSeenMs = st.lastSeenMs === null ? atMs : Math.max(st.lastSeenMs, atMs);
  st.lastWill = false;
  if (handleDisabled(ctx, 'controller-offline', st.cond, atMs)) return;
  st.cond.pendingSinceMs = null;
  if (!st.cond.active) return;
  resetCond(st.cond);
  ctx.emit({ ruleId: 'controller-offline', kind: 'clear', priority: st.cond.priority, atMs, value: null, message: 'The controller is reporting again.' });
}

/** Checks for silence at wall time nowMs (ms), or applies a last will when lastWill is set. */
export function offlineCheck(st: OfflineState, ctx: RuleContext, nowMs: number): void {
  // Before the first message the clock starts at the first tick, so a box that never reports still alarms.
  st.lastSeenMs ??= nowMs;
  if (handleDisabled(ctx, 'controller-offline', st.cond, nowMs)) return;
  const rule = ctx.rules['controller-offline'];
  const silentMs = nowMs - st.lastSeenMs;
  const silent = silentMs >= rule.threshold * ctx.settings.reportIntervalS * 1000;
  if (!silent && !st.lastWill) return;
  const change = stepCondition(st.cond, 'bad', nowMs, rule, ctx.raiseBlocked);
  if (change === 'raise') ctx.emit(raiseEvent(st, nowMs, silentMs / MIN_MS));
}
