import { describe, expect, it } from 'vitest';
import { BoxRuleEngine, type EngineSnapshot } from '../../shared/rules/engine';
import { MIN, STEP_MS, T0, cooler, of, reading, run } from './fixtures/ruleTrace';

describe('controller-offline', () => {
  it('raises on wall clock after 3 missed report intervals and clears on the next reading', () => {
    const e = new BoxRuleEngine(cooler({ reportIntervalS: 10 }));
    e.onReading(reading(T0), T0);
    expect(e.onTick(T0 + 29_000)).toEqual([]);
    const raised = e.onTick(T0 + 30_000); // 3 × 10 s
    expect(of(raised, 'controller-offline')).toHaveLength(1);
    const cleared = e.onReading(reading(T0 + 31_000), T0 + 31_000);
    expect(of(cleared, 'controller-offline', 'clear')).toHaveLength(1);
  });

  it('raises at once on the last will and clears on the online status', () => {
    const e = new BoxRuleEngine(cooler());
    e.onReading(reading(T0), T0);
    const down = e.onControllerStatus(false, T0 + 1000);
    expect(of(down, 'controller-offline')[0]?.message).toContain('offline');
    expect(of(e.onControllerStatus(true, T0 + 5000), 'controller-offline', 'clear')).toHaveLength(1);
  });

  it('raises even for a controller never heard from, counting from the first tick', () => {
    const e = new BoxRuleEngine(cooler());
    expect(e.onTick(T0)).toEqual([]);
    expect(of(e.onTick(T0 + 30_000), 'controller-offline')).toHaveLength(1);
  });

  it('raises nothing in maintenance', () => {
    const e = new BoxRuleEngine(cooler());
    e.setMaintenance(T0 + 60 * MIN);
    e.onReading(reading(T0), T0);
    expect(e.onTick(T0 + 10 * MIN)).toEqual([]);
    expect(e.onControllerStatus(false, T0 + 11 * MIN)).toEqual([]);
    expect(of(e.onTick(T0 + 61 * MIN), 'controller-offline')).toHaveLength(1);
  });
});

describe('BoxRuleEngine timers', () => {
  it('ignores a reading older than the last one for its timers', () => {
    const e = new BoxRuleEngine(cooler());
    const hot = run(e, T0, 20, { boxAirC: 6 });
    // A stale cold reading from before the excursion must not reset the 30-min delay.
    expect(e.onReading(reading(T0 + 5 * MIN, { boxAirC: 2 }))).toEqual([]);
    const rest = run(e, hot.endMs, 11, { boxAirC: 6 });
    expect(of(rest.events, 'box-air-high')[0]?.atMs).toBe(T0 + 30 * MIN);
  });

  it('clears a raised alarm when its rule is turned off', () => {
    const s = cooler();
    const e = new BoxRuleEngine(s);
    run(e, T0, 31, { doorOpen: true });
    expect(e.active()).toEqual(['door-open']);
    e.updateSettings({ ...s, overrides: { 'door-open': { enabled: false } } });
    const after = run(e, T0 + 31 * MIN, 1, { doorOpen: true });
    expect(of(after.events, 'door-open', 'clear')).toHaveLength(1);
    expect(e.active()).toEqual([]);
  });

  it('keeps at most one skip per rule', () => {
    const e = new BoxRuleEngine(cooler({ valveType: 'txv' }));
    run(e, T0, 60, { superheatK: null, valvePercent: null, defrostOn: true });
    const ids = e.skips.map((s) => s.ruleId);
    expect(new Set(ids).size).toBe(ids.length);
    expect(ids.length).toBeLessThanOrEqual(12);
  });
});

describe('BoxRuleEngine snapshot', () => {
  it('raises at the same time after a restore from a JSON snapshot as an engine that never stopped', () => {
    const s = cooler();
    const shape = (t: number) => ({ boxAirC: 6, doorOpen: t >= T0 + 2 * MIN, compressorOn: ((t - T0) / MIN) % 5 >= 4 });
    const steady = new BoxRuleEngine(s);
    const all = run(steady, T0, 120, shape).events;

    const first = new BoxRuleEngine(s);
    const head = run(first, T0, 17, shape).events;
    const stored = JSON.parse(JSON.stringify(first.snapshot())) as EngineSnapshot;
    expect(JSON.stringify(stored).length).toBeLessThan(4000);
    const restored = new BoxRuleEngine(s, stored);
    const tail = run(restored, T0 + 17 * MIN, 103, shape).events;

    const key = (ev: { ruleId: string; kind: string; atMs: number }) => `${ev.ruleId}:${ev.kind}:${ev.atMs}`;
    expect([...head, ...tail].map(key)).toEqual(all.map(key));
    expect(of(all, 'box-air-high')[0]?.atMs).toBe(T0 + 30 * MIN);
    expect(of(all, 'door-open')).toHaveLength(1);
    expect(of(all, 'short-cycling')).toHaveLength(1);
    expect(restored.active()).toEqual(steady.active());
  });

  it('keeps a snapshot independent of the engine that made it', () => {
    const e = new BoxRuleEngine(cooler());
    run(e, T0, 5, { boxAirC: 6 });
    const snap = e.snapshot();
    run(e, T0 + 5 * MIN, 30, { boxAirC: 6 });
    expect(snap.boxAir.high.active).toBe(false);
    expect(snap.lastTsMs).toBe(T0 + 5 * MIN - STEP_MS);
  });
});
