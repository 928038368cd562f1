/**
 * Rule defaults by box kind, each with its source, and the effective rule for one box (the box's own
 * limits and delays fed in, then its per-rule overrides). Temperatures °C, differences K, times min.
 * Section numbers of the FDA Food Code are as read in TRADE-NOTES §1 (state adoptions of the text);
 * values marked "common practice" have no code source (TRADE-NOTES §2, partly from memory).
 */
import type { BoxKind } from '../domain';
import { EVAPORATOR_SUPERHEAT_FLOOR_K } from '../field/superheat';
import type { AlarmRuleId, RuleBoxSettings, RuleOverride } from '../alarms/types';

export type EffectiveRule = Required<RuleOverride>;

/** Cooler high limit, °C: 41 °F cold holding, FDA Food Code 3-501.16(A)(2). */
export const COOLER_HIGH_LIMIT_C = 5;
/** Freezer high limit, °C: +10 °F, common practice (+5 to +10 °F, TRADE-NOTES §2, from memory). */
export const FREEZER_HIGH_LIMIT_C = -12;
/** Cooler low limit, °C: 32 °F, product starts freezing; common practice (32–33 °F, from memory). */
export const COOLER_LOW_LIMIT_C = 0;
/** Freezer low limit, °C: about −22 °F, our choice well below the −10…0 °F freezer band (ACHR 127265). */
export const FREEZER_LOW_LIMIT_C = -30;
/** Temperature alarm delay, min: common practice 30–60 min (TRADE-NOTES §2, from memory). */
export const TEMPERATURE_DELAY_MIN = 30;
/** Continuous time above the high limit after which box-air-high turns critical, min: 4 h, FDA Food Code 3-501.19(B). */
export const TIME_AS_CONTROL_MIN = 240;
/** Recovery window after a defrost ends during which box-air-high stays suppressed, min: common practice 30–60 min (from memory). */
export const DEFROST_RECOVERY_MIN = 30;
/** Superheat rules ignore the first minutes after a compressor start (pull-down), min: common practice. */
export const SUPERHEAT_START_IGNORE_MIN = 5;
/** superheat-low fires below target − this band (or below the evaporator superheat floor), K: our choice. */
export const SUPERHEAT_LOW_BAND_K = 1.5;
/** superheat-high fires above target + this band, K: our choice (an EEV holds 2–4 K, TRADE-NOTES §3, from memory). */
export const SUPERHEAT_HIGH_BAND_K = 5;
/** Valve opening from which high superheat points to low charge or a restriction, %: TRADE-NOTES §4 (valve pinned near 100 %). */
export const VALVE_NEAR_OPEN_PERCENT = 90;

/** The defaults of every rule for a box kind (a fresh object each call). */
export function ruleDefaults(kind: BoxKind): Record<AlarmRuleId, EffectiveRule> {
  const cooler = kind === 'cooler';
  return {
    'box-air-high': { enabled: true, threshold: cooler ? COOLER_HIGH_LIMIT_C : FREEZER_HIGH_LIMIT_C, delayMin: TEMPERATURE_DELAY_MIN, clearDelayMin: 5, deadband: 1, priority: 'high' },
    'box-air-low': { enabled: true, threshold: cooler ? COOLER_LOW_LIMIT_C : FREEZER_LOW_LIMIT_C, delayMin: TEMPERATURE_DELAY_MIN, clearDelayMin: 5, deadband: 1, priority: cooler ? 'high' : 'medium' },
    // 5 °F (2.78 K): evaporator superheat floor (shared/field/superheat, common practice); 10 min delay our choice.
    'superheat-low': { enabled: true, threshold: EVAPORATOR_SUPERHEAT_FLOOR_K, delayMin: 10, clearDelayMin: 2, deadband: 0.5, priority: 'high' },
    'superheat-high': { enabled: true, threshold: (cooler ? 4 : 3) + SUPERHEAT_HIGH_BAND_K, delayMin: 15, clearDelayMin: 5, deadband: 1, priority: 'medium' },
    // Threshold = the box's defrost limit (min); the delay is the margin past it (our choice: 10 min covers drip time).
    'defrost-overtime': { enabled: true, threshold: cooler ? 30 : 40, delayMin: 10, clearDelayMin: 0, deadband: 0, priority: 'medium' },
    // Threshold = defrosts in a row ending on time. Coolers defrost off-cycle and often end on time by design
    // (ACHR 110983), so the rule is off by default there.
    'defrost-timed-termination': { enabled: !cooler, threshold: 3, delayMin: 0, clearDelayMin: 0, deadband: 0, priority: 'medium' },
    // Delay = the box's door alarm delay: common practice 3–10 min (TRADE-NOTES §2).
    'door-open': { enabled: true, threshold: 0, delayMin: 5, clearDelayMin: 0, deadband: 0, priority: 'medium' },
    // Threshold = starts in the last hour: common practice 6–10/h; the top end keeps normal cycling quiet.
    'short-cycling': { enabled: true, threshold: 10, delayMin: 0, clearDelayMin: 0, deadband: 2, priority: 'medium' },
    // Threshold = continuous run, min (4 h, common practice) with the box still above setpoint.
    'long-run': { enabled: true, threshold: 240, delayMin: 0, clearDelayMin: 0, deadband: 0, priority: 'medium' },
    // Threshold = failed pump-downs or uncalled restarts in the last 2 h before raising ("more than N"); our choice.
    'pump-down-failure': { enabled: true, threshold: 2, delayMin: 0, clearDelayMin: 0, deadband: 0, priority: 'medium' },
    // Threshold = minutes a box-air reading may stay bit-identical while the compressor cycles (3 h, our choice).
    'sensor-fault': { enabled: true, threshold: 180, delayMin: 1, clearDelayMin: 5, deadband: 0, priority: 'high' },
    // Threshold = missed report intervals (3, as the issue sets).
    'controller-offline': { enabled: true, threshold: 3, delayMin: 0, clearDelayMin: 0, deadband: 0, priority: 'high' },
  };
}

/** The rule as it applies to one box: kind defaults, then the box's own limits and delays, then its override. */
export function effectiveRule(settings: RuleBoxSettings, ruleId: AlarmRuleId): EffectiveRule {
  const rule = ruleDefaults(settings.kind)[ruleId];
  switch (ruleId) {
    case 'box-air-high':
      rule.threshold = settings.highLimitC;
      rule.delayMin = settings.alarmDelayMin;
      break;
    case 'box-air-low':
      rule.threshold = settings.lowLimitC;
      rule.delayMin = settings.alarmDelayMin;
      break;
    case 'superheat-low':
      rule.threshold = Math.min(EVAPORATOR_SUPERHEAT_FLOOR_K, settings.superheatTargetK - SUPERHEAT_LOW_BAND_K);
      break;
    case 'superheat-high':
      rule.threshold = settings.superheatTargetK + SUPERHEAT_HIGH_BAND_K;
      break;
    case 'defrost-overtime':
      rule.threshold = settings.defrostMaxMin;
      break;
    case 'door-open':
      rule.delayMin = settings.doorAlarmDelayMin;
      break;
    default:
      break;
  }
  const o = settings.overrides[ruleId];
  if (o) {
    if (o.enabled !== undefined) rule.enabled = o.enabled;
    if (o.threshold !== undefined) rule.threshold = o.threshold;
    if (o.delayMin !== undefined) rule.delayMin = o.delayMin;
    if (o.clearDelayMin !== undefined) rule.clearDelayMin = o.clearDelayMin;
    if (o.deadband !== undefined) rule.deadband = o.deadband;
    if (o.priority !== undefined) rule.priority = o.priority;
  }
  return rule;
}

/**
 * Where each rule's default comes from, in words for the box's rule table (the same sources as the
 * constants and comments above; the box's own settings feed the rules that say so).
 */
export const RULE_DEFAULT_SOURCES: Record<AlarmRuleId, string> = {
  'box-air-high': "Limit and delay: the box's high limit and alarm delay (cooler 41 °F / 5 °C, FDA Food Code 3-501.16(A)(2); freezer +10 °F, common practice; delay 30–60 min, common practice). Critical after 4 h above, FDA Food Code 3-501.19(B).",
  'box-air-low': "Limit and delay: the box's low limit and alarm delay (cooler 32 °F, product starts freezing, common practice; freezer about −22 °F, our choice).",
  'superheat-low': "Threshold: the lower of 5 °F (2.8 K), the evaporator superheat floor (common practice), and the box's superheat target − 1.5 K (our choice). Delay 10 min, our choice.",
  'superheat-high': "Threshold: the box's superheat target + 5 K (our choice; an EEV holds 2–4 K, common practice). Delay 15 min, our choice.",
  'defrost-overtime': "Threshold: the box's defrost time limit; 10 min past it for drip time, our choice.",
  'defrost-timed-termination': 'Three defrosts in a row ending on time, our choice; off by default on coolers, whose off-cycle defrost often ends on time by design (common practice).',
  'door-open': "Delay: the box's door alarm delay (3–10 min, common practice).",
  'short-cycling': 'More than 10 compressor starts in an hour (6–10/h, common practice).',
  'long-run': 'Compressor running 4 h without a stop with box air above setpoint (common practice).',
  'pump-down-failure': 'More than 2 failed pump-downs or restarts without a call in 2 h, our choice.',
  'sensor-fault': 'Off-scale thermistor at once; a box-air reading unchanged for 3 h while the compressor cycles, our choice.',
  'controller-offline': 'Three missed reporting intervals, or the controller’s last will (as the alarm specification sets).',
};
