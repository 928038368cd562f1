import { describe, expect, it } from 'vitest';
import { AlarmTransitionError, isOpen, needsAck, nextState } from '../../shared/alarms/lifecycle';
import { ALARM_STATES, type AlarmAction, type AlarmState } from '../../shared/alarms/types';

// Expected moves from ANSI/ISA-18.2 (alarm state transition diagram), as the issue states them.
const legal: Array<[AlarmState, AlarmAction, boolean, AlarmState]> = [
  ['normal', 'raise', true, 'unacknowledged'],
  ['unacknowledged', 'ack', true, 'acknowledged'],
  ['unacknowledged', 'clear', false, 'rtn-unacknowledged'],
  ['acknowledged', 'clear', false, 'normal'],
  ['rtn-unacknowledged', 'ack', false, 'normal'],
  ['rtn-unacknowledged', 'raise', true, 'unacknowledged'],
  ['acknowledged', 'raise', true, 'acknowledged'],
  ['unacknowledged', 'shelve', true, 'shelved'],
  ['acknowledged', 'shelve', true, 'shelved'],
  ['rtn-unacknowledged', 'shelve', false, 'shelved'],
  ['shelved', 'unshelve', true, 'unacknowledged'],
  ['shelved', 'unshelve', false, 'normal'],
  ['shelved', 'shelve-expired', true, 'unacknowledged'],
  ['shelved', 'shelve-expired', false, 'normal'],
  ['shelved', 'raise', true, 'shelved'],
  ['normal', 'suppress', false, 'suppressed'],
  ['acknowledged', 'suppress', true, 'suppressed'],
  ['suppressed', 'raise', true, 'suppressed'],
  ['suppressed', 'unsuppress', true, 'unacknowledged'],
  ['suppressed', 'unsuppress', false, 'normal'],
  ['unacknowledged', 'remove-from-service', true, 'out-of-service'],
  ['out-of-service', 'clear', false, 'out-of-service'],
  ['out-of-service', 'return-to-service', true, 'unacknowledged'],
  ['out-of-service', 'return-to-service', false, 'normal'],
];

const illegal: Array<[AlarmState, AlarmAction]> = [
  ['normal', 'ack'],
  ['normal', 'shelve'],
  ['normal', 'unshelve'],
  ['normal', 'unsuppress'],
  ['normal', 'return-to-service'],
  ['acknowledged', 'ack'],
  ['unacknowledged', 'unshelve'],
  ['shelved', 'ack'],
  ['suppressed', 'ack'],
  ['suppressed', 'shelve'],
  ['out-of-service', 'ack'],
  ['out-of-service', 'suppress'],
];

describe('nextState (ISA-18.2 lifecycle)', () => {
  it.each(legal)('moves %s + %s (condition active: %s) to %s', (from, action, active, to) => {
    expect(nextState(from, action, active)).toBe(to);
  });

  it.each(illegal)('refuses %s + %s with an AlarmTransitionError', (from, action) => {
    let caught: unknown = null;
    try {
      nextState(from, action, true);
    } catch (e) {
      caught = e;
    }
    expect(caught).toBeInstanceOf(AlarmTransitionError);
    expect((caught as AlarmTransitionError).state).toBe(from);
    expect((caught as AlarmTransitionError).action).toBe(action);
  });

  it('keeps an unacknowledged alarm that returned to normal waiting for its acknowledgement', () => {
    const s = nextState(nextState('normal', 'raise', true), 'clear', false);
    expect(s).toBe('rtn-unacknowledged');
    expect(needsAck(s)).toBe(true);
    expect(nextState(s, 'ack', false)).toBe('normal');
  });
});

describe('isOpen and needsAck', () => {
  it('calls every state but normal open', () => {
    for (const s of ALARM_STATES) expect(isOpen(s)).toBe(s !== 'normal');
  });

  it('asks for an acknowledgement only in unacknowledged and rtn-unacknowledged', () => {
    expect(ALARM_STATES.filter(needsAck)).toEqual(['unacknowledged', 'rtn-unacknowledged']);
  });
});
