/**
 * Rimehold's box condition scheme. Each condition has its own hue, icon and words, so the state
 * never rests on colour alone.
 */
import type { FleetBoxStatus } from '@shared/schemas/live';
import type { IconName } from '@/components/AppIcon.vue';
import { ageSeconds } from './time';

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
