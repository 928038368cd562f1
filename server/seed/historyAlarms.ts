/**
 * The past alarms of a seeded box: the rule engine's condition events over the history replayed
 * through the ISA-18.2 lifecycle the way server/alarms/actions.ts stores live ones (a new alarm per
 * raise, re-opened within REOPEN_WINDOW_MS, cleared by the engine), with the demo technician's
 * acknowledgements in between. Pure: rows in memory, written by historyStore.ts.
 */
import type { AlarmAction, AlarmPriority, AlarmRuleId, AlarmState, ConditionEvent } from '../../shared/alarms/types';
import { AlarmTransitionError, needsAck, nextState } from '../../shared/alarms/lifecycle';
import { REOPEN_WINDOW_MS } from '../alarms/actions';
import type { FaultEpisode } from './historyPlan';

/** An alarm's transition as stored in alarm_transitions (epoch ms). */
export interface SeedTransition {
  atMs: number;
  action: AlarmAction;
  fromState: AlarmState;
  toState: AlarmState;
  userId: number | null;
  note: string | null;
}

/** An alarm row as stored in alarms (epoch ms), with its transitions. */
export interface SeedAlarm {
  ruleId: AlarmRuleId;
  priority: AlarmPriority;
  state: AlarmState;
  conditionActive: boolean;
  value: number | null;
  message: string;
  raisedAtMs: number;
  clearedAtMs: number | null;
  acknowledgedAtMs: number | null;
  acknowledgedBy: number | null;
  reopenCount: number;
  nextEscalationAtMs: number | null;
  updatedAtMs: number;
  transitions: SeedTransition[];
}

/** How long after a raise the technician acknowledges an alarm outside any planned fault, min (our choice). */
const ROUTINE_ACK_AFTER_MIN = 25;
const ROUTINE_NOTE = 'Checked remotely; box recovering on its own, no visit needed.';
/** An alarm raised this long after a fault ended still belongs to it (the box recovering), ms. */
const FAULT_TAIL_MS = 3 * 3_600_000;

function safeNext(state: AlarmState, action: AlarmAction, active: boolean): AlarmState | null {
  try {
    return nextState(state, action, active);
  } catch (err) {
    if (err instanceof AlarmTransitionError) return null;
    throw err;
  }
}

/** The technician's answer to an alarm raised at atMs: the fault it belongs to, or the routine one. */
function ackPlan(atMs: number, faults: FaultEpisode[]): { afterMs: number; note: string } {
  const f = faults.find((e) => atMs >= e.fromMs && atMs <= e.toMs + FAULT_TAIL_MS);
  return f ? { afterMs: f.ackAfterMin * 60_000, note: f.note } : { afterMs: ROUTINE_ACK_AFTER_MIN * 60_000, note: ROUTINE_NOTE };
}

/**
 * Stored alarms for one box from its condition events (in time order), acknowledged by
 * `technicianId` (when not null) at each raise + its plan's delay if that is before `nowMs`.
 */
export function replayAlarms(events: ConditionEvent[], faults: FaultEpisode[], technicianId: number | null, nowMs: number): SeedAlarm[] {
  const alarms: SeedAlarm[] = [];
  const last = new Map<AlarmRuleId, SeedAlarm>();
  const acks: Array<{ atMs: number; alarm: SeedAlarm; note: string }> = [];
  const move = (a: SeedAlarm, action: AlarmAction, to: AlarmState, atMs: number, userId: number | null, note: string | null) => {
    a.transitions.push({ atMs, action, fromState: a.state, toState: to, userId, note });
    a.state = to;
    a.updatedAtMs = atMs;
  };
  const scheduleAck = (a: SeedAlarm, atMs: number) => {
    if (technicianId === null) return;
    const plan = ackPlan(atMs, faults);
    if (atMs + plan.afterMs < nowMs) acks.push({ atMs: atMs + plan.afterMs, alarm: a, note: plan.note });
  };
  const runAcksUntil = (tMs: number) => {
    acks.sort((x, y) => x.atMs - y.atMs);
    while (acks.length > 0 && (acks[0]?.atMs ?? Infinity) <= tMs) {
      const ack = acks.shift();
      if (!ack || !needsAck(ack.alarm.state)) continue;
      const to = safeNext(ack.alarm.state, 'ack', ack.alarm.conditionActive);
      if (to === null) continue;
      move(ack.alarm, 'ack', to, ack.atMs, technicianId, ack.note);
      ack.alarm.acknowledgedAtMs = ack.atMs;
      ack.alarm.acknowledgedBy = technicianId;
      ack.alarm.nextEscalationAtMs = null;
    }
  };
  for (const ev of events) {
    runAcksUntil(ev.atMs);
    const prev = last.get(ev.ruleId);
    if (ev.kind === 'priority') {
      if (prev?.conditionActive) Object.assign(prev, { priority: ev.priority, value: ev.value, message: ev.message, updatedAtMs: ev.atMs });
      continue;
    }
    if (ev.kind === 'clear') {
      if (!prev?.conditionActive) continue;
      const to = safeNext(prev.state, 'clear', false);
      if (to !== null && to !== prev.state) move(prev, 'clear', to, ev.atMs, null, null);
      prev.conditionActive = false;
      prev.clearedAtMs = ev.atMs;
      prev.updatedAtMs = ev.atMs;
      if (to === null || !needsAck(to)) prev.nextEscalationAtMs = null;
      continue;
    }
    const reopen = prev && (prev.state !== 'normal' || (prev.clearedAtMs !== null && ev.atMs - prev.clearedAtMs <= REOPEN_WINDOW_MS));
    if (prev && reopen) {
      if (prev.conditionActive) continue;
      const to = safeNext(prev.state, 'raise', true) ?? prev.state;
      const moved = to !== prev.state;
      if (moved) move(prev, 'raise', to, ev.atMs, null, 'condition returned');
      Object.assign(prev, { conditionActive: true, clearedAtMs: null, priority: ev.priority, value: ev.value, message: ev.message, reopenCount: prev.reopenCount + 1, updatedAtMs: ev.atMs });
      if (needsAck(to) && moved) {
        Object.assign(prev, { acknowledgedAtMs: null, acknowledgedBy: null, nextEscalationAtMs: ev.atMs });
        scheduleAck(prev, ev.atMs);
      }
      continue;
    }
    const a: SeedAlarm = {
      ruleId: ev.ruleId,
      priority: ev.priority,
      state: 'normal',
      conditionActive: true,
      value: ev.value,
      message: ev.message,
      raisedAtMs: ev.atMs,
      clearedAtMs: null,
      acknowledgedAtMs: null,
      acknowledgedBy: null,
      reopenCount: 0,
      nextEscalationAtMs: ev.atMs,
      updatedAtMs: ev.atMs,
      transitions: [],
    };
    move(a, 'raise', nextState('normal', 'raise', true), ev.atMs, null, null);
    alarms.push(a);
    last.set(ev.ruleId, a);
    scheduleAck(a, ev.atMs);
  }
  runAcksUntil(nowMs);
  return alarms;
}
