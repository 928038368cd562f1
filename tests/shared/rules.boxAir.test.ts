import { describe, expect, it } from 'vitest';
import { CAUTIONS } from '../../shared/safety';
import { BoxRuleEngine } from '../../shared/rules/engine';
import { ruleDefaults, effectiveRule } from '../../shared/rules/defaults';
import { MIN, T0, cooler, freezer, of, run } from './fixtures/ruleTrace';

describe('box-air-high', () => {
  it('defaults a cooler to 5 °C and a freezer to −12 °C', () => {
    expect(ruleDefaults('cooler')['box-air-high'].threshold).toBe(5); // 41 °F: FDA Food Code 3-501.16(A)(2)
    expect(ruleDefaults('freezer')['box-air-high'].threshold).toBe(-12); // +10 °F: common practice (from memory)
  });

  it("feeds the box's own high limit and alarm delay into the rule, then its override", () => {
    const s = cooler({ highLimitC: 4, alarmDelayMin: 45, overrides: { 'box-air-high': { priority: 'critical' } } });
    expect(effectiveRule(s, 'box-air-high')).toMatchObject({ threshold: 4, delayMin: 45, priority: 'critical', deadband: 1 });
  });

  it('raises after the 30-min alarm delay and not before', () => {
    const e = new BoxRuleEngine(cooler());
    const before = run(e, T0, 30, { boxAirC: 6 });
    expect(of(before.events, 'box-air-high')).toHaveLength(0);
    const after = run(e, before.endMs, 1, { boxAirC: 6 });
    const raised = of(after.events, 'box-air-high');
    expect(raised).toHaveLength(1);
    expect(raised[0]?.atMs).toBe(T0 + 30 * MIN);
    expect(raised[0]?.priority).toBe('high');
    expect(raised[0]?.message).toContain(CAUTIONS.foodSafety.text);
    expect(e.active()).toContain('box-air-high');
  });

  it('clears only below the limit minus its 1 K deadband, after the 5-min clear delay', () => {
    const e = new BoxRuleEngine(cooler());
    const hot = run(e, T0, 31, { boxAirC: 6 });
    const inBand = run(e, hot.endMs, 30, { boxAirC: 4.5 });
    expect(of(inBand.events, 'box-air-high', 'clear')).toHaveLength(0);
    const cold = run(e, inBand.endMs, 6, { boxAirC: 3.9 });
    const cleared = of(cold.events, 'box-air-high', 'clear');
    expect(cleared).toHaveLength(1);
    expect(cleared[0]?.atMs).toBe(inBand.endMs + 5 * MIN);
  });

  it('restarts its delay when box air dips under the limit', () => {
    const e = new BoxRuleEngine(cooler());
    const a = run(e, T0, 20, { boxAirC: 6 });
    const b = run(e, a.endMs, 1, { boxAirC: 4.8 });
    const c = run(e, b.endMs, 29, { boxAirC: 6 });
    expect(of([...a.events, ...b.events, ...c.events], 'box-air-high')).toHaveLength(0);
  });

  it('stays quiet through defrost and the 30-min recovery window, then raises after its delay', () => {
    const e = new BoxRuleEngine(cooler());
    const d = run(e, T0, 40, { boxAirC: 8, defrostOn: true, compressorOn: false });
    const rec = run(e, d.endMs, 30, { boxAirC: 6 });
    expect(of([...d.events, ...rec.events], 'box-air-high')).toHaveLength(0);
    expect(e.skips.find((s) => s.ruleId === 'box-air-high')?.reason).toBe('in the recovery window after defrost');
    const late = run(e, rec.endMs, 31, { boxAirC: 6 });
    expect(of(late.events, 'box-air-high')[0]?.atMs).toBe(d.endMs + 60 * MIN); // recovery 30 min (common practice) + delay 30 min
  });

  it('raises nothing during maintenance but raises as soon as it ends if the condition held', () => {
    const e = new BoxRuleEngine(cooler());
    e.setMaintenance(T0 + 60 * MIN);
    const inMaint = run(e, T0, 60, { boxAirC: 6 });
    expect(inMaint.events).toHaveLength(0);
    const after = run(e, inMaint.endMs, 1, { boxAirC: 6 });
    expect(of(after.events, 'box-air-high')[0]?.atMs).toBe(T0 + 60 * MIN);
  });

  it('turns critical once box air has been above the limit for 4 h (FDA Food Code 3-501.19(B))', () => {
    const e = new BoxRuleEngine(cooler());
    const { events } = run(e, T0, 241, { boxAirC: 7 });
    const p = of(events, 'box-air-high', 'priority');
    expect(p).toHaveLength(1);
    expect(p[0]?.priority).toBe('critical');
    expect(p[0]?.atMs).toBe(T0 + 240 * MIN);
    expect(p[0]?.message).toContain('3-501.19');
  });

  it('does not read a shorted box-air thermistor as a warm box', () => {
    const e = new BoxRuleEngine(cooler());
    const { events } = run(e, T0, 40, { boxAirC: 130 }); // shorted NTC reads off-scale hot (TRADE-NOTES §4)
    expect(of(events, 'box-air-high')).toHaveLength(0);
    expect(of(events, 'sensor-fault')).toHaveLength(1);
    expect(e.skips.find((s) => s.ruleId === 'box-air-high')?.reason).toBe('box-air sensor reads off-scale');
  });
});

describe('box-air-low', () => {
  it('raises after the alarm delay when a cooler falls below its 0 °C low limit (32 °F product freezing, common practice)', () => {
    const e = new BoxRuleEngine(cooler());
    const { events } = run(e, T0, 31, { boxAirC: -0.5 });
    const raised = of(events, 'box-air-low');
    expect(raised).toHaveLength(1);
    expect(raised[0]?.atMs).toBe(T0 + 30 * MIN);
  });

  it('clears only above the low limit plus its deadband', () => {
    const e = new BoxRuleEngine(freezer());
    const cold = run(e, T0, 31, { boxAirC: -31 });
    const band = run(e, cold.endMs, 10, { boxAirC: -29.5 });
    expect(of(band.events, 'box-air-low', 'clear')).toHaveLength(0);
    const warm = run(e, band.endMs, 6, { boxAirC: -28.5 });
    expect(of(warm.events, 'box-air-low', 'clear')[0]?.atMs).toBe(band.endMs + 5 * MIN);
  });

  it('is silent when turned off by an override', () => {
    const e = new BoxRuleEngine(cooler({ overrides: { 'box-air-low': { enabled: false } } }));
    const { events } = run(e, T0, 40, { boxAirC: -2 });
    expect(of(events, 'box-air-low')).toHaveLength(0);
  });
});
