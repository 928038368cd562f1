/** Cycle timers on the client (src/lib/cycleTimers.ts): live readings change the state, the clock makes them tick. */
import { describe, expect, it } from 'vitest';
import type { BoxCyclesDto } from '@shared/schemas/cycles';
import { applyReading, cycleStateFrom, durationText, timersAt } from '@/lib/cycleTimers';

const MIN = 60_000;
const T = Date.parse('2030-01-15T12:00:00.000Z');
const iso = (ms: number) => new Date(ms).toISOString();

function dto(): BoxCyclesDto {
  return {
    boxId: 5,
    asOf: iso(T),
    windowFrom: iso(T - 13 * 60 * MIN),
    lastReadingAt: iso(T - 10_000),
    current: true,
    timeZone: 'UTC',
    compressor: { on: true, sinceAt: iso(T - 12 * MIN), sinceBeforeWindow: false, startsLastHour: 2, startsAt: [iso(T - 50 * MIN), iso(T - 12 * MIN)] },
    defrost: { on: false, lastStartAt: iso(T - 5 * 60 * MIN), lastEndAt: iso(T - 270 * MIN), lastDurationMin: 30, intervalH: 6, nextDueAt: iso(T + 60 * MIN) },
    door: { open: false, sinceAt: iso(T - 30 * MIN), sinceBeforeWindow: false, openTodayMin: 4, openingsToday: 1, countedUntil: iso(T), dayStartAt: iso(Date.parse('2030-01-15T00:00:00Z')), dayEndAt: iso(Date.parse('2030-01-16T00:00:00Z')) },
  };
}

describe('cycle timers on the client', () => {
  it('ticks the run time and lets starts age out of the last hour', () => {
    const s = cycleStateFrom(dto());
    expect(timersAt(s, T).compressorForMs).toBe(12 * MIN);
    expect(timersAt(s, T + 3 * MIN).compressorForMs).toBe(15 * MIN);
    expect(timersAt(s, T).startsLastHour).toBe(2);
    // The start at T − 50 min leaves the hour at T + 10 min.
    expect(timersAt(s, T + 11 * MIN).startsLastHour).toBe(1);
    expect(timersAt(s, T).untilNextDefrostMs).toBe(60 * MIN);
  });

  it('restarts the counters on a state change from a live reading and adds door time while open', () => {
    let s = cycleStateFrom(dto());
    s = applyReading(s, { ts: iso(T + MIN), compressorOn: false, defrostOn: false, doorOpen: true });
    let t = timersAt(s, T + 3 * MIN);
    expect(t.compressorOn).toBe(false);
    expect(t.compressorForMs).toBe(2 * MIN);
    expect(t.doorOpen).toBe(true);
    expect(t.doorForMs).toBe(2 * MIN);
    // 4 min before + 2 min open so far.
    expect(t.doorTodayMs).toBe(6 * MIN);
    s = applyReading(s, { ts: iso(T + 5 * MIN), compressorOn: true, defrostOn: false, doorOpen: false });
    t = timersAt(s, T + 20 * MIN);
    expect(t.doorTodayMs).toBe(8 * MIN);
    expect(t.startsLastHour).toBe(2);
    // A late (older) reading changes nothing.
    expect(applyReading(s, { ts: iso(T), compressorOn: false, defrostOn: true, doorOpen: true })).toBe(s);
  });

  it('times the next defrost from a defrost that starts live, and says nothing is scheduled without one', () => {
    let s = cycleStateFrom(dto());
    s = applyReading(s, { ts: iso(T + MIN), compressorOn: false, defrostOn: true, doorOpen: false });
    expect(timersAt(s, T + 11 * MIN).sinceDefrostStartMs).toBe(10 * MIN);
    expect(timersAt(s, T + 11 * MIN).untilNextDefrostMs).toBe(6 * 60 * MIN - 10 * MIN);
    const none = cycleStateFrom({ ...dto(), defrost: { ...dto().defrost, lastStartAt: null, lastEndAt: null, nextDueAt: null } });
    expect(timersAt(none, T).untilNextDefrostMs).toBeNull();
  });

  it('writes durations briefly', () => {
    expect(durationText(45_000)).toBe('45 s');
    expect(durationText(12 * MIN)).toBe('12 min');
    expect(durationText(185 * MIN)).toBe('3 h 05 min');
  });
});
