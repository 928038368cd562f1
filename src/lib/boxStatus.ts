/**
 * Rimehold's box condition scheme. Each condition has its own hue, icon and words, so the state
 * never rests on colour alone.
 */
import type { FleetBoxStatus } from '@shared/schemas/live';
import type { IconName } from '@/components/AppIcon.vue';
import type { AlarmPriority } from '@shared/alarms/types';
import { ageSeconds } from './time';
import { PRIORITY_RANK } from './alarmText';

/** A reading older than this counts as stale (common practice: controllers report every few seconds to a minute). */
export const STALE_AFTER_S = 180;
/** Box air further than this from the setpoint (outside defrost) is "drifting" (common practice for walk-ins). */
export const DRIFT_BAND_K = 3;

export type BoxCondition = 'holding' | 'drifting' | 'breach' | 'defrost' | 'stale' | 'silent';

export interface ConditionLook {
  label: string;
  hint: string;
  icon: IconName;
  /** CSS custom property name holding the hue. */
  hue: string;
}

export const CONDITIONS: Record<BoxCondition, ConditionLook> = {
  holding: { label: 'Holding', hint: 'Box air near the setpoint', icon: 'holding', hue: 'var(--rh-holding)' },
  drifting: { label: 'Drifting', hint: 'Box air away from the setpoint, inside the limits', icon: 'drift', hue: 'var(--rh-drifting)' },
  breach: { label: 'Out of limits', hint: 'Box air beyond the high or low limit', icon: 'breach', hue: 'var(--rh-breach)' },
  defrost: { label: 'Defrosting', hint: 'Defrost cycle running; box air rises for a while', icon: 'defrost', hue: 'var(--rh-defrost)' },
  stale: { label: 'Stale', hint: `No reading for more than ${STALE_AFTER_S / 60} minutes`, icon: 'clock', hue: 'var(--rh-quiet)' },
  silent: { label: 'No signal', hint: 'Controller offline or not provisioned', icon: 'no-signal', hue: 'var(--rh-quiet)' },
};

export function isStale(box: Pick<FleetBoxStatus, 'latest'>, nowMs: number): boolean {
  return ageSeconds(box.latest?.ts, nowMs) > STALE_AFTER_S;
}

/** The condition of a box now. */
export function boxCondition(box: FleetBoxStatus, nowMs: number): BoxCondition {
  if (!box.online || box.controllerSerial === null) return box.latest && !isStale(box, nowMs) ? conditionOf(box) : 'silent';
  if (!box.latest || isStale(box, nowMs)) return 'stale';
  return conditionOf(box);
}

function conditionOf(box: FleetBoxStatus): BoxCondition {
  const r = box.latest;
  if (!r) return 'stale';
  if (r.boxAirC > box.highLimitC || r.boxAirC < box.lowLimitC) return r.defrostOn && r.boxAirC > box.highLimitC ? 'defrost' : 'breach';
  if (r.defrostOn) return 'defrost';
  if (Math.abs(r.boxAirC - box.setpointC) > DRIFT_BAND_K) return 'drifting';
  return 'holding';
}

/**
 * The fleet page's states, one per box, read at a glance: each has its own words, icon and hue.
 * Precedence (first that applies): maintenance (someone is on it; alarms are held), alarm, offline,
 * door open, defrosting, drifting, in range. Door and defrost come before drifting because they
 * explain a rise of box air.
 */
export type FleetState = 'alarm' | 'offline' | 'drifting' | 'door' | 'maintenance' | 'defrost' | 'in-range';

/** Sort order of the fleet page: trouble first (alarm, offline, drifting, door open), then the rest. */
export const FLEET_STATE_ORDER: readonly FleetState[] = ['alarm', 'offline', 'drifting', 'door', 'maintenance', 'defrost', 'in-range'];
/** States that need someone to look. */
export const TROUBLE_STATES: readonly FleetState[] = ['alarm', 'offline', 'drifting', 'door'];

export const FLEET_STATES: Record<FleetState, ConditionLook> = {
  alarm: { label: 'Alarm', hint: 'An alarm is active on this box', icon: 'bell', hue: 'var(--rh-breach)' },
  offline: { label: 'Offline', hint: `No controller, controller offline, or no reading for more than ${STALE_AFTER_S / 60} minutes`, icon: 'no-signal', hue: 'var(--rh-quiet)' },
  drifting: { label: 'Drifting', hint: `Box air more than ${DRIFT_BAND_K} K from the setpoint or past a limit, no alarm yet`, icon: 'drift', hue: 'var(--rh-drifting)' },
  door: { label: 'Door open', hint: 'The door switch reads open', icon: 'door', hue: 'var(--rh-drifting)' },
  maintenance: { label: 'Maintenance', hint: 'In a maintenance window: alarms are held', icon: 'wrench', hue: 'var(--rh-quiet)' },
  defrost: { label: 'Defrosting', hint: 'Defrost cycle running; box air rises for a while', icon: 'defrost', hue: 'var(--rh-defrost)' },
  'in-range': { label: 'In range', hint: 'Box air near the setpoint', icon: 'holding', hue: 'var(--rh-holding)' },
};

/** Why a box counts as offline, in words (null when it does not). */
export function offlineReason(box: Pick<FleetBoxStatus, 'controllerSerial' | 'online' | 'latest'>, nowMs: number): string | null {
  if (box.controllerSerial === null) return 'No controller';
  if (!box.online) return 'Controller offline';
  if (!box.latest) return 'Never reported';
  if (isStale(box, nowMs)) return 'No recent reading';
  return null;
}

/** Is the box inside its maintenance window at `nowMs`? */
export function inMaintenance(box: Pick<FleetBoxStatus, 'maintenanceUntil'>, nowMs: number): boolean {
  if (!box.maintenanceUntil) return false;
  const until = Date.parse(box.maintenanceUntil);
  return Number.isNaN(until) || until > nowMs;
}

/** The fleet state of a box now; `alarmPriority` is the most urgent active alarm's priority (null when none). */
export function fleetState(box: FleetBoxStatus, alarmPriority: AlarmPriority | null, nowMs: number): FleetState {
  if (inMaintenance(box, nowMs)) return 'maintenance';
  if (alarmPriority !== null) return 'alarm';
  if (offlineReason(box, nowMs) !== null) return 'offline';
  const r = box.latest;
  if (!r) return 'offline';
  if (r.doorOpen) return 'door';
  if (r.defrostOn) return 'defrost';
  if (r.boxAirC > box.highLimitC || r.boxAirC < box.lowLimitC || Math.abs(r.boxAirC - box.setpointC) > DRIFT_BAND_K) return 'drifting';
  return 'in-range';
}

/** Sort rank (lower first): the state's place in FLEET_STATE_ORDER; alarms split by priority, most urgent first. */
export function fleetRank(state: FleetState, alarmPriority: AlarmPriority | null): number {
  const base = FLEET_STATE_ORDER.indexOf(state) * 10;
  return state === 'alarm' && alarmPriority !== null ? base + (3 - PRIORITY_RANK[alarmPriority]) : base;
}
