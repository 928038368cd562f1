/** Plain-language words for alarm rules, states and priorities, and alarm time formatting. */
import type { AlarmPriority, AlarmRuleId, AlarmState } from '@shared/alarms/types';
import { CAUTIONS } from '@shared/safety';
import { dateTimeText } from './time';

export interface RuleText {
  /** Short name for lists. */
  label: string;
  /** One or two sentences saying what the rule watches. */
  explain: string;
  /** A standard caution that goes with the rule (shared/safety.ts), when one fits. */
  caution?: string;
}

const BOX_AIR_NOTE = 'This is the air in the box, not the temperature of the food.';

export const RULE_TEXT: Readonly<Record<AlarmRuleId, RuleText>> = {
  'box-air-high': {
    label: 'Box air too warm',
    explain: `The box air stayed above its high limit for longer than the allowed delay. ${BOX_AIR_NOTE}`,
    caution: CAUTIONS.foodSafety.text,
  },
  'box-air-low': {
    label: 'Box air too cold',
    explain: `The box air stayed below its low limit for longer than the allowed delay. ${BOX_AIR_NOTE}`,
    caution: CAUTIONS.foodSafety.text,
  },
  'superheat-low': {
    label: 'Superheat low',
    explain: 'Superheat at the evaporator outlet stayed well below its target while the compressor ran; liquid may be leaving the coil.',
    caution: CAUTIONS.notADiagnosis.text,
  },
  'superheat-high': {
    label: 'Superheat high',
    explain: 'Superheat at the evaporator outlet stayed well above its target while the compressor ran; the coil may be starved of refrigerant.',
    caution: CAUTIONS.notADiagnosis.text,
  },
  'defrost-overtime': {
    label: 'Defrost ran too long',
    explain: 'A defrost lasted longer than the maximum set for this box.',
  },
  'defrost-timed-termination': {
    label: 'Defrost ended on time, not temperature',
    explain: 'A defrost was stopped by its time limit before the coil reached its termination temperature; ice may be left on the coil.',
  },
  'door-open': {
    label: 'Door left open',
    explain: 'The door switch has shown the door open for longer than the allowed delay.',
  },
  'short-cycling': {
    label: 'Compressor short-cycling',
    explain: 'The compressor started more often per hour than this box allows.',
    caution: CAUTIONS.notADiagnosis.text,
  },
  'long-run': {
    label: 'Compressor running without a break',
    explain: 'The compressor has run longer without stopping than this box allows.',
    caution: CAUTIONS.notADiagnosis.text,
  },
  'pump-down-failure': {
    label: 'Pump-down problem',
    explain: 'The system did not pump down as expected when the box was satisfied, or restarted too soon after it.',
    caution: CAUTIONS.notADiagnosis.text,
  },
  'sensor-fault': {
    label: 'Sensor fault',
    explain: 'A sensor is sending values that cannot be right (open, shorted or out of range).',
  },
  'controller-offline': {
    label: 'Controller not reporting',
    explain: 'Rimehold has not heard from the controller for three reporting intervals. The box may be fine; we just cannot see it.',
  },
};

export const STATE_TEXT: Readonly<Record<AlarmState, { label: string; explain: string }>> = {
  normal: { label: 'Cleared', explain: 'The condition has ended and the alarm was acknowledged.' },
  unacknowledged: { label: 'New — needs acknowledging', explain: 'The condition is present and nobody has acknowledged it yet.' },
  acknowledged: { label: 'Acknowledged, still active', explain: 'Someone acknowledged it; the condition is still present.' },
  'rtn-unacknowledged': { label: 'Cleared — not yet acknowledged', explain: 'The condition ended by itself before anyone acknowledged it.' },
  shelved: { label: 'Shelved', explain: 'Hidden for a limited time by a technician; it comes back when the time runs out.' },
  suppressed: { label: 'Suppressed', explain: 'Held back by design (for example while the box is in maintenance or defrost).' },
  'out-of-service': { label: 'Out of service', explain: 'This alarm is switched off for maintenance.' },
};

export const PRIORITY_TEXT: Readonly<Record<AlarmPriority, string>> = {
  low: 'Low',
  medium: 'Medium',
  high: 'High',
  critical: 'Critical',
};

/** Higher number = more urgent. */
export const PRIORITY_RANK: Readonly<Record<AlarmPriority, number>> = { low: 0, medium: 1, high: 2, critical: 3 };

/** States a person still has to look at (shown first, counted on the badge). */
export const ATTENTION_STATES: readonly AlarmState[] = ['unacknowledged', 'acknowledged', 'rtn-unacknowledged'];

/** States that can be acknowledged. */
export function canAcknowledge(state: AlarmState): boolean {
  return state === 'unacknowledged' || state === 'rtn-unacknowledged';
}

/** "3 Dec 2026, 14:05 CST" in the given IANA zone (the browser's when none), zone always named. */
export function alarmTimeText(iso: string | null | undefined, timeZone?: string | null): string {
  return dateTimeText(iso, timeZone);
}

/** The rule's value with its unit ("6.4 K", "12 starts/h"); temperatures are left to the caller's unit formatter. */
export function ruleValueKind(rule: AlarmRuleId): 'temp' | 'delta' | 'minutes' | 'per-hour' | 'none' {
  switch (rule) {
    case 'box-air-high':
    case 'box-air-low':
    case 'defrost-timed-termination':
      return 'temp';
    case 'superheat-low':
    case 'superheat-high':
      return 'delta';
    case 'defrost-overtime':
    case 'door-open':
    case 'long-run':
    case 'controller-offline':
      return 'minutes';
    case 'short-cycling':
      return 'per-hour';
    default:
      return 'none';
  }
}
