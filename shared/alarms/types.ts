/**
 * The alarm vocabulary shared by the rule engine (shared/rules), the lifecycle (shared/alarms),
 * the server's alarm service (server/alarms) and the client. Temperatures °C, differences K,
 * times in epoch milliseconds (`…Ms`) or minutes (`…Min`) as named.
 */
import type { BoxKind, ValveType } from '../domain';

/** Every rule Rimehold evaluates for a box. */
export const ALARM_RULES = [
  'box-air-high',
  'box-air-low',
  'superheat-low',
  'superheat-high',
  'defrost-overtime',
  'defrost-timed-termination',
  'door-open',
  'short-cycling',
  'long-run',
  'pump-down-failure',
  'sensor-fault',
  'controller-offline',
] as const;
export type AlarmRuleId = (typeof ALARM_RULES)[number];

/** Alarm priorities, lowest first (ISA-18.2 asks for a small number of distinct priorities). */
export const ALARM_PRIORITIES = ['low', 'medium', 'high', 'critical'] as const;
export type AlarmPriority = (typeof ALARM_PRIORITIES)[number];

/**
 * The alarm states of ANSI/ISA-18.2 (Management of Alarm Systems for the Process Industries):
 * normal; unacknowledged; acknowledged; returned to normal unacknowledged; shelved; suppressed
 * by design; out of service.
 */
export const ALARM_STATES = ['normal', 'unacknowledged', 'acknowledged', 'rtn-unacknowledged', 'shelved', 'suppressed', 'out-of-service'] as const;
export type AlarmState = (typeof ALARM_STATES)[number];

/** What can happen to an alarm: from the rule engine (raise, clear), people (ack, shelve…) or design (suppress). */
export const ALARM_ACTIONS = ['raise', 'clear', 'ack', 'shelve', 'unshelve', 'shelve-expired', 'suppress', 'unsuppress', 'remove-from-service', 'return-to-service'] as const;
export type AlarmAction = (typeof ALARM_ACTIONS)[number];

/** One reading as the rule engine sees it (a subset of ReadingDto, with the reading time in ms). */
export interface RuleReading {
  tsMs: number;
  boxAirC: number;
  suctionKPaG: number;
  suctionLineC: number;
  coilInletC: number | null;
  saturatedSuctionC: number | null;
  superheatK: number | null;
  valvePercent: number | null;
  compressorOn: boolean;
  fanOn: boolean;
  defrostOn: boolean;
  doorOpen: boolean;
}

/** Per-box override of one rule's defaults; any field left out keeps the default for the box kind. */
export interface RuleOverride {
  enabled?: boolean;
  /** The rule's threshold in its own unit (°C for limits, K for superheat, starts/h, minutes…). */
  threshold?: number;
  delayMin?: number;
  clearDelayMin?: number;
  /** Hysteresis in the threshold's unit (K for temperatures). */
  deadband?: number;
  priority?: AlarmPriority;
}

/** The box settings the rules read. */
export interface RuleBoxSettings {
  kind: BoxKind;
  valveType: ValveType;
  setpointC: number;
  highLimitC: number;
  lowLimitC: number;
  alarmDelayMin: number;
  doorAlarmDelayMin: number;
  superheatTargetK: number;
  defrostMaxMin: number;
  defrostTerminationC: number;
  /** The controller's nominal reporting interval (s); offline after three missed. */
  reportIntervalS: number;
  /** Pump-down cut-out of the suction, kPa(g); null when unknown (the pump-down rule then checks restarts only). */
  pumpDownCutOutKPaG: number | null;
  overrides: Partial<Record<AlarmRuleId, RuleOverride>>;
}

/** A change of a rule's condition for one box. */
export interface ConditionEvent {
  ruleId: AlarmRuleId;
  /** raise: the condition became true after its delay; clear: it ended (after its deadband/clear delay); priority: a raised condition changed priority. */
  kind: 'raise' | 'clear' | 'priority';
  priority: AlarmPriority;
  /** Reading time (or tick time for time-based rules) at which the change happened. */
  atMs: number;
  /** The value that triggered it, in the rule's unit (null when the rule has none). */
  value: number | null;
  /** One plain sentence for people (e.g. box air above the limit; says box air is not food temperature). */
  message: string;
}

/** A rule that was not evaluated for a reading, and why (TXV box, no valid superheat, in defrost…). */
export interface RuleSkip {
  ruleId: AlarmRuleId;
  reason: string;
  atMs: number;
}
