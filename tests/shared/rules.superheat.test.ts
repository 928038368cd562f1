import { describe, expect, it } from 'vitest';
import { BoxRuleEngine } from '../../shared/rules/engine';
import { effectiveRule } from '../../shared/rules/defaults';
import { EVAPORATOR_SUPERHEAT_FLOOR_K } from '../../shared/field/superheat';
import { MIN, T0, cooler, of, run } from './fixtures/ruleTrace';

/** Compressor off for 5 min, then on: returns the time of the start. */
function startCompressor(e: BoxRuleEngine): number {
  return run(e, T0, 5, { compressorOn: false, superheatK: null }).endMs;
}

describe('superheat-high', () => {
  it('sits 5 K above the target (our band) and superheat-low at the 5 °F evaporator superheat floor (common practice)', () => {
    expect(effectiveRule(cooler({ superheatTargetK: 4 }), 'superheat-high').threshold).toBe(9);
    expect(effectiveRule(cooler({ superheatTargetK: 8 }), 'superheat-low').threshold).toBeCloseTo(EVAPORATOR_SUPERHEAT_FLOOR_K, 6);
    expect(EVAPORATOR_SUPERHEAT_FLOOR_K).toBeCloseTo(2.78, 2); // 5 °F difference = 2.78 K
    // A target set below the minimum moves the low alarm under the target so that it is not always on.
    expect(effectiveRule(cooler({ superheatTargetK: 3 }), 'superheat-low').threshold).toBeCloseTo(1.5, 6);
  });

  it('raises after its 15-min delay past the 5-min pull-down and names low charge with the valve wide open', () => {
    const e = new BoxRuleEngine(cooler());
    const startMs = startCompressor(e);
    const { events } = run(e, startMs, 25, { superheatK: 15, valvePercent: 100 }); // low charge: SH high, valve pinned (TRADE-NOTES §4)
    const raised = of(events, 'superheat-high');
    expect(raised).toHaveLength(1);
    expect(raised[0]?.atMs).toBe(startMs + 20 * MIN);
    expect(raised[0]?.message).toContain('low charge or a restriction');
  });

  it('leaves out the low-charge hint when the valve is not near fully open', () => {
    const e = new BoxRuleEngine(cooler());
    const startMs = startCompressor(e);
    const { events } = run(e, startMs, 25, { superheatK: 15, valvePercent: 50 });
    expect(of(events, 'superheat-high')[0]?.message).not.toContain('low charge');
  });

  it('ignores high superheat during the pull-down after a start', () => {
    const e = new BoxRuleEngine(cooler({ overrides: { 'superheat-high': { delayMin: 0 } } }));
    const startMs = startCompressor(e);
    const pull = run(e, startMs, 5, { superheatK: 20 });
    expect(of(pull.events, 'superheat-high')).toHaveLength(0);
    expect(e.skips.find((s) => s.ruleId === 'superheat-high')?.reason).toBe('pull-down after compressor start');
    const settled = run(e, pull.endMs, 1, { superheatK: 20 });
    expect(of(settled.events, 'superheat-high')).toHaveLength(1);
  });

  it('clears once superheat is back under the threshold minus its deadband', () => {
    const e = new BoxRuleEngine(cooler());
    const startMs = startCompressor(e);
    const hot = run(e, startMs, 21, { superheatK: 15 });
    const band = run(e, hot.endMs, 10, { superheatK: 8.5 });
    expect(of(band.events, 'superheat-high', 'clear')).toHaveLength(0);
    const ok = run(e, band.endMs, 6, { superheatK: 4 });
    expect(of(ok.events, 'superheat-high', 'clear')).toHaveLength(1);
  });
});

describe('superheat-low', () => {
  it('raises after 10 min below the evaporator superheat floor', () => {
    const e = new BoxRuleEngine(cooler({ superheatTargetK: 6 }));
    const startMs = startCompressor(e);
    const { events } = run(e, startMs, 16, { superheatK: 1.5, valvePercent: 5 });
    const raised = of(events, 'superheat-low');
    expect(raised).toHaveLength(1);
    expect(raised[0]?.atMs).toBe(startMs + 15 * MIN);
  });

  it('stays quiet in defrost and records the reason', () => {
    const e = new BoxRuleEngine(cooler());
    const { events } = run(e, T0, 60, { superheatK: 0.5, defrostOn: true });
    expect(of(events, 'superheat-low')).toHaveLength(0);
    expect(e.skips.find((s) => s.ruleId === 'superheat-low')?.reason).toBe('in defrost');
  });
});

describe('superheat rules skip what they cannot judge', () => {
  it('skips a TXV box', () => {
    const e = new BoxRuleEngine(cooler({ valveType: 'txv' }));
    const startMs = startCompressor(e);
    const { events } = run(e, startMs, 60, { superheatK: 20, valvePercent: null });
    expect(of(events, 'superheat-high')).toHaveLength(0);
    expect(e.skips.find((s) => s.ruleId === 'superheat-high')?.reason).toMatch(/^TXV box/);
  });

  it('skips readings without a valid superheat', () => {
    const e = new BoxRuleEngine(cooler());
    const startMs = startCompressor(e);
    const { events } = run(e, startMs, 60, { superheatK: null });
    expect(events).toHaveLength(0);
    const skip = e.skips.find((s) => s.ruleId === 'superheat-low');
    expect(skip?.reason).toBe('no valid superheat in this reading');
    expect(skip?.atMs).toBe(startMs + 60 * MIN - 10_000);
  });
});
