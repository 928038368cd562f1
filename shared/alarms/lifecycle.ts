/**
 * The alarm lifecycle of ANSI/ISA-18.2 (Management of Alarm Systems for the Process Industries) as a
 * pure state table. The rule engine supplies raise/clear; people ack and shelve; design suppresses
 * (defrost, maintenance); out-of-service removes an alarm from service. States are in ./types.
 */
import type { AlarmAction, AlarmState } from './types';

/** Thrown when an action is not allowed in a state (for example ack in normal). */
export class AlarmTransitionError extends Error {
  override readonly name = 'AlarmTransitionError';
  constructor(
    readonly state: AlarmState,
    readonly action: AlarmAction,
  ) {
    super(`An alarm in state "${state}" cannot take the action "${action}".`);
  }
}

/** Where an alarm goes when it comes back from shelved, suppressed or out of service. */
function back(conditionActive: boolean): AlarmState {
  return conditionActive ? 'unacknowledged' : 'normal';
}

/** The state after action in state, given whether the rule's condition is true now; throws AlarmTransitionError for an illegal move. */
export function nextState(state: AlarmState, action: AlarmAction, conditionActive: boolean): AlarmState {
  // Design and service actions first: they apply to every state the same way.
  if (action === 'remove-from-service') return 'out-of-service';
  if (state === 'out-of-service') {
    if (action === 'return-to-service') return back(conditionActive);
    // The engine keeps tracking the condition while the alarm is out of service.
    if (action === 'raise' || action === 'clear') return state;
    throw new AlarmTransitionError(state, action);
  }
  if (action === 'suppress') return 'suppressed';
  if (state === 'suppressed') {
    if (action === 'unsuppress') return back(conditionActive);
    if (action === 'raise' || action === 'clear') return state;
    throw new AlarmTransitionError(state, action);
  }
  if (state === 'shelved') {
    if (action === 'unshelve' || action === 'shelve-expired') return back(conditionActive);
    // Re-shelving extends the shelf; raise/clear are tracked but the alarm stays shelved.
    if (action === 'shelve' || action === 'raise' || action === 'clear') return state;
    throw new AlarmTransitionError(state, action);
  }
  switch (state) {
    case 'normal':
      if (action === 'raise') return 'unacknowledged';
      if (action === 'clear') return 'normal';
      break;
    case 'unacknowledged':
      if (action === 'raise') return 'unacknowledged';
      if (action === 'ack') return 'acknowledged';
      if (action === 'clear') return 'rtn-unacknowledged';
      if (action === 'shelve') return 'shelved';
      break;
    case 'acknowledged':
      if (action === 'raise') return 'acknowledged';
      if (action === 'clear') return 'normal';
      if (action === 'shelve') return 'shelved';
      break;
    case 'rtn-unacknowledged':
      if (action === 'raise') return 'unacknowledged';
      if (action === 'clear') return 'rtn-unacknowledged';
      if (action === 'ack') return 'normal';
      if (action === 'shelve') return 'shelved';
      break;
  }
  throw new AlarmTransitionError(state, action);
}

/** True for every state except normal (the alarm still needs attention or is held). */
export function isOpen(state: AlarmState): boolean {
  return state !== 'normal';
}

/** True when a person still has to acknowledge the alarm (unacknowledged, or returned to normal unacknowledged). */
export function needsAck(state: AlarmState): boolean {
  return state === 'unacknowledged' || state === 'rtn-unacknowledged';
}
