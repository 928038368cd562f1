import { describe, expect, it } from 'vitest';
import { BoxRuleEngine } from '../../shared/rules/engine';
import { thermistorFault } from '../../shared/rules/sensors';
import { MIN, T0, cooler, of, run } from './fixtures/ruleTrace';

describe('sensor-fault', () => {
  it('reads the ends of the telemetry thermistor range (−60 / 130 °C, shared/schemas/telemetry.ts) as open and shorted', () => {
    expect(thermistorFault(-60)).toBe('open'); // open NTC: off-scale cold (TRADE-NOTES §4)
    expect(thermistorFault(130)).toBe('shorted'); // shorted NTC: off-scale hot
    expect(thermistorFault(-45)).toBeNull();
    expect(thermistorFault(60)).toBeNull();
  });

  it('raises after its 1-min delay for an open suction-line thermistor and names it', () => {
    const e = new BoxRuleEngine(cooler());
    const a = run(e, T0, 1, { suctionLineC: -60 });
    expect(of(a.events, 'sensor-fault')).toHaveLength(0);
    const b = run(e, a.endMs, 1, { suctionLineC: -60 });
    const raised = of(b.events, 'sensor-fault');
    expect(raised[0]?.atMs).toBe(T0 + MIN);
    expect(raised[0]?.message).toContain('suction-line thermistor');
    expect(raised[0]?.message).toContain('open');
  });

  it('raises for a suction transducer pinned at the end of its range and clears 5 min after it reads again', () => {
    const e = new BoxRuleEngine(cooler());
    const bad = run(e, T0, 2, { suctionKPaG: -101 });
    expect(of(bad.events, 'sensor-fault')).toHaveLength(1);
    const good = run(e, bad.endMs, 6, {});
    expect(of(good.events, 'sensor-fault', 'clear')[0]?.atMs).toBe(bad.endMs + 5 * MIN);
  });

  it('raises when box air stays bit-identical for 3 h while the compressor cycles', () => {
    const e = new BoxRuleEngine(cooler());
    const cycling = (t: number) => ({ boxAirC: 3.3, compressorOn: ((t - T0) / MIN) % 15 < 8 });
    const early = run(e, T0, 180, cycling);
    expect(of(early.events, 'sensor-fault')).toHaveLength(0);
    const late = run(e, early.endMs, 2, cycling);
    const raised = of(late.events, 'sensor-fault');
    expect(raised).toHaveLength(1);
    expect(raised[0]?.atMs).toBe(T0 + 181 * MIN); // 3 h flat (our choice) + 1 min delay
    expect(raised[0]?.message).toContain('stuck');
  });

  it('raises when box air stays bit-identical for 3 h with the compressor off: a sensor stuck cold keeps the compressor from starting while the box warms', () => {
    const e = new BoxRuleEngine(cooler());
    const early = run(e, T0, 180, { boxAirC: 3.0, compressorOn: false });
    expect(of(early.events, 'sensor-fault')).toHaveLength(0);
    const late = run(e, early.endMs, 2, { boxAirC: 3.0, compressorOn: false });
    const raised = of(late.events, 'sensor-fault');
    expect(raised).toHaveLength(1);
    expect(raised[0]?.atMs).toBe(T0 + 181 * MIN); // 3 h flat (our choice) + 1 min delay
    expect(raised[0]?.message).toContain('the compressor has not started');
  });

  it('raises when box air stays bit-identical for 3 h with the compressor running on: a sensor stuck warm can freeze a cooler', () => {
    const e = new BoxRuleEngine(cooler());
    const { events } = run(e, T0, 182, { boxAirC: 6.0, compressorOn: true });
    expect(of(events, 'sensor-fault').map((x) => x.message)).toEqual([expect.stringContaining('the compressor has run on')]);
  });

  it('does not call a box air that moves by 0.1 K stuck', () => {
    const e = new BoxRuleEngine(cooler());
    const { events } = run(e, T0, 240, (t, i) => ({ boxAirC: i % 30 === 0 ? 3.4 : 3.3, compressorOn: ((t - T0) / MIN) % 15 < 8 }));
    expect(of(events, 'sensor-fault')).toHaveLength(0);
  });
});
