import { describe, expect, it } from 'vitest';
import type { RuleReading } from '../../shared/alarms/types';
import { BoxRuleEngine } from '../../shared/rules/engine';
import { MIN, T0, cooler, freezer, of, run } from './fixtures/ruleTrace';

/**
 * Normal thermostat cycling of a 2 °C cooler with pump-down (invented trace): 15-min cycle, 7.5 min
 * feeding, 30 s pump-down (valve closed) to below the 55 kPa(g) cut-out (≈ 8 psig, ACHR 142618:
 * 5–10 psig), then off. 4 starts/h, each with box air at 4 °C (above setpoint: the thermostat calls).
 */
function normalCycle(periodMin = 15, pumpDown: Partial<RuleReading> = { suctionKPaG: 50 }, offBoxC = 2.5): (t: number) => Partial<RuleReading> {
  return (t) => {
    const inCycleMin = ((t - T0) / MIN) % periodMin;
    if (inCycleMin < 7.5) return { compressorOn: true, valvePercent: 45, boxAirC: inCycleMin < 0.2 ? 4 : 3 };
    if (inCycleMin < 8) return { compressorOn: true, valvePercent: 0, boxAirC: 2, ...pumpDown };
    return { compressorOn: false, valvePercent: 0, boxAirC: offBoxC, superheatK: null, suctionKPaG: 150 };
  };
}

describe('normal cycling', () => {
  it('raises no cycle rule over 6 h of healthy cycling', () => {
    const e = new BoxRuleEngine(cooler());
    const { events } = run(e, T0, 360, normalCycle());
    expect(events).toEqual([]);
  });
});

describe('defrost-overtime', () => {
  it('raises once a defrost runs past its limit plus the 10-min margin, and clears when it ends', () => {
    const e = new BoxRuleEngine(freezer()); // 40-min fail-safe (hvacfun: 35–45 min)
    const d = run(e, T0, 51, { defrostOn: true, compressorOn: false, boxAirC: -18 });
    const raised = of(d.events, 'defrost-overtime');
    expect(raised).toHaveLength(1);
    expect(raised[0]?.atMs).toBe(T0 + 50 * MIN + 10_000); // first reading past 40 min + 10 min margin
    const end = run(e, d.endMs, 1, { defrostOn: false, boxAirC: -18 });
    expect(of(end.events, 'defrost-overtime', 'clear')).toHaveLength(1);
  });

  it('stays quiet for a defrost that ends inside its limit', () => {
    const e = new BoxRuleEngine(freezer());
    const d = run(e, T0, 45, { defrostOn: true, compressorOn: false, boxAirC: -18 });
    expect(of(d.events, 'defrost-overtime')).toHaveLength(0);
  });
});

describe('defrost-timed-termination', () => {
  /** One freezer defrost of durationMin reaching coil maxCoilC, then 6 h of running. */
  function defrost(e: BoxRuleEngine, fromMs: number, durationMin: number, maxCoilC: number) {
    const d = run(e, fromMs, durationMin, (t) => ({ defrostOn: true, compressorOn: false, boxAirC: -18, coilInletC: t - fromMs > (durationMin - 2) * MIN ? maxCoilC : 0 }));
    const after = run(e, d.endMs, 360, { boxAirC: -20, coilInletC: -28 });
    return { events: [...d.events, ...after.events], endMs: after.endMs };
  }

  it('raises when 3 defrosts in a row end on their time limit with the coil below termination (heater or termination fault)', () => {
    const e = new BoxRuleEngine(freezer()); // terminate at 10 °C coil (~50 °F, walk-in I&O manual)
    const a = defrost(e, T0, 40, 2);
    const b = defrost(e, a.endMs, 40, 2);
    expect(of([...a.events, ...b.events], 'defrost-timed-termination')).toHaveLength(0);
    const c = defrost(e, b.endMs, 40, 2);
    const raised = of(c.events, 'defrost-timed-termination');
    expect(raised).toHaveLength(1);
    expect(raised[0]?.value).toBe(3);
    const good = defrost(e, c.endMs, 20, 12);
    expect(of(good.events, 'defrost-timed-termination', 'clear')).toHaveLength(1);
  });

  it('counts a defrost that reached its termination temperature as a good one', () => {
    const e = new BoxRuleEngine(freezer());
    let t = T0;
    const all = [];
    for (let i = 0; i < 4; i++) {
      const r = defrost(e, t, i === 2 ? 20 : 40, i === 2 ? 11 : 2);
      all.push(...r.events);
      t = r.endMs;
    }
    expect(of(all, 'defrost-timed-termination')).toHaveLength(0);
  });

  it('is off by default for coolers, whose off-cycle defrost often ends on time by design (ACHR 110983)', () => {
    const e = new BoxRuleEngine(cooler());
    let t = T0;
    const all = [];
    for (let i = 0; i < 4; i++) {
      const r = run(e, t, 30, { defrostOn: true, compressorOn: false, coilInletC: 1 });
      const after = run(e, r.endMs, 60, {});
      all.push(...r.events, ...after.events);
      t = after.endMs;
    }
    expect(of(all, 'defrost-timed-termination')).toHaveLength(0);
  });
});

describe('door-open', () => {
  it("raises after the box's door delay (5 min here; common practice 3–10 min) and not before, and clears when it closes", () => {
    const e = new BoxRuleEngine(cooler({ doorAlarmDelayMin: 5 }));
    const open = run(e, T0, 5, { doorOpen: true });
    expect(of(open.events, 'door-open')).toHaveLength(0);
    const more = run(e, open.endMs, 1, { doorOpen: true });
    expect(of(more.events, 'door-open')[0]?.atMs).toBe(T0 + 5 * MIN);
    const shut = run(e, more.endMs, 1, { doorOpen: false });
    expect(of(shut.events, 'door-open', 'clear')).toHaveLength(1);
  });

  it('raises nothing in maintenance', () => {
    const e = new BoxRuleEngine(cooler());
    e.setMaintenance(T0 + 120 * MIN);
    expect(run(e, T0, 60, { doorOpen: true }).events).toHaveLength(0);
  });
});

describe('short-cycling', () => {
  it('raises on the 11th start within an hour (threshold 10/h, common practice 6–10/h) and clears at 8 or fewer', () => {
    const e = new BoxRuleEngine(cooler());
    // A start every 5 min: 1 min on, 4 min off (tight LP differential, TRADE-NOTES §4).
    const cycling = (t: number) => ({ compressorOn: ((t - T0) / MIN) % 5 >= 4, boxAirC: 4 });
    const fast = run(e, T0, 54, cycling); // starts at minutes 4, 9, … 49: ten
    expect(of(fast.events, 'short-cycling')).toHaveLength(0);
    const more = run(e, fast.endMs, 1, cycling); // the 11th start, at minute 54
    const raised = of(more.events, 'short-cycling');
    expect(raised).toHaveLength(1);
    expect(raised[0]?.value).toBe(11);
    expect(raised[0]?.atMs).toBe(T0 + 54 * MIN);
    const slow = run(e, more.endMs, 70, { compressorOn: true, boxAirC: 3 });
    expect(of(slow.events, 'short-cycling', 'clear')).toHaveLength(1);
  });
});

describe('long-run', () => {
  it('raises after 4 h of continuous running with box air above setpoint (common practice)', () => {
    const e = new BoxRuleEngine(cooler());
    const { events } = run(e, T0, 241, { compressorOn: true, boxAirC: 4 });
    const raised = of(events, 'long-run');
    expect(raised).toHaveLength(1);
    expect(raised[0]?.atMs).toBe(T0 + 240 * MIN);
  });

  it('stays quiet when the box holds setpoint while running', () => {
    const e = new BoxRuleEngine(cooler());
    expect(of(run(e, T0, 300, { compressorOn: true, boxAirC: 1.8 }).events, 'long-run')).toHaveLength(0);
  });
});

describe('pump-down-failure', () => {
  it('raises on the 3rd pump-down in 2 h that does not reach the cut-out (leak-through, ACHR 142618)', () => {
    const e = new BoxRuleEngine(cooler());
    // The pump-down lasts 3 min (the compressor stops on its pump-down timer) with suction held at 90 kPa(g).
    const leak = (t: number): Partial<RuleReading> => {
      const m = ((t - T0) / MIN) % 20;
      if (m < 7.5) return { compressorOn: true, valvePercent: 45, boxAirC: m < 0.2 ? 4 : 3 };
      if (m < 10.5) return { compressorOn: true, valvePercent: 0, suctionKPaG: 90, boxAirC: 2 };
      return { compressorOn: false, valvePercent: 0, suctionKPaG: 150, boxAirC: 2.5, superheatK: null };
    };
    const two = run(e, T0, 40, leak);
    expect(of(two.events, 'pump-down-failure')).toHaveLength(0);
    const three = run(e, two.endMs, 20, leak);
    const raised = of(three.events, 'pump-down-failure');
    expect(raised).toHaveLength(1);
    expect(raised[0]?.message).toContain('leak through');
    const tight = run(e, three.endMs, 150, normalCycle(20));
    expect(of(tight.events, 'pump-down-failure', 'clear')).toHaveLength(1);
  });

  it('raises on the 3rd start with the valve still closed (a restart on the pressure switch, no call)', () => {
    const e = new BoxRuleEngine(cooler());
    // Pumps down to the cut-out each time, then the leaking valve brings suction back to cut-in: restart every 4 min, box air 3 °C.
    const { events } = run(e, T0, 15, (t) => {
      const m = ((t - T0) / MIN) % 4;
      return m < 3 ? { compressorOn: false, valvePercent: 0, boxAirC: 3, superheatK: null } : { compressorOn: true, valvePercent: 0, boxAirC: 3, suctionKPaG: 40 };
    });
    const raised = of(events, 'pump-down-failure');
    expect(raised).toHaveLength(1);
    expect(raised[0]?.atMs).toBe(T0 + 11 * MIN); // starts at minutes 3, 7, 11: the third is "more than 2"
  });

  it('raises on the 3rd restart without a call (box air below setpoint at the start)', () => {
    const settings = cooler({ pumpDownCutOutKPaG: null, valveType: 'txv' });
    const e = new BoxRuleEngine(settings);
    // Restarts on the pressure switch every 10 min with box air at 1.5 °C, under the 2 °C setpoint.
    const { events } = run(e, T0, 35, (t) => ({ compressorOn: ((t - T0) / MIN) % 10 >= 8, boxAirC: 1.5, valvePercent: null }));
    const raised = of(events, 'pump-down-failure');
    expect(raised).toHaveLength(1);
    expect(raised[0]?.atMs).toBe(T0 + 28 * MIN);
    expect(e.skips.find((s) => s.ruleId === 'pump-down-failure')?.reason).toMatch(/only restarts without a call/);
  });
});
