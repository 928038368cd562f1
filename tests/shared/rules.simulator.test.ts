import { describe, expect, it } from 'vitest';
import type { ConditionEvent, RuleBoxSettings, RuleReading } from '../../shared/alarms/types';
import { BoxRuleEngine } from '../../shared/rules/engine';
import type { BoxModel } from '../../simulator/model/box';
import type { FaultName } from '../../simulator/model/faults';
import { START_MS, makeBox } from '../simulator/helpers';

/** The rule settings of a simulated box: its own setpoint, defrost and LP cut-out; limits 5 °C / −12 °C (as in defaults.ts). */
function settingsOf(m: BoxModel): RuleBoxSettings {
  const p = m.params;
  const cooler = p.kind === 'cooler';
  return {
    kind: p.kind,
    valveType: p.valveType,
    setpointC: p.setpointC,
    highLimitC: cooler ? 5 : -12, // 41 °F: FDA Food Code 3-501.16(A)(2); freezer +10 °F common practice
    lowLimitC: cooler ? 0 : -30,
    alarmDelayMin: 30,
    doorAlarmDelayMin: 5,
    superheatTargetK: p.superheatTargetK,
    defrostMaxMin: p.defrostMaxMin,
    defrostTerminationC: p.defrostTerminationC,
    reportIntervalS: 10,
    pumpDownCutOutKPaG: m.lpSettings.cutOutKPaG,
    overrides: {},
  };
}

/** The simulator's reading as the server would hand it to the engine (superheat on the dew curve at the reading's pressure). */
function ruleReading(m: BoxModel): RuleReading {
  const r = m.reading();
  const satC = m.fluid.dewC(m.fluid.toAbsoluteKPa(r.suctionKPaG));
  return {
    tsMs: START_MS + Math.round(m.tS * 1000),
    boxAirC: r.boxAirC,
    suctionKPaG: r.suctionKPaG,
    suctionLineC: r.suctionLineC,
    coilInletC: r.coilInletC ?? null,
    saturatedSuctionC: satC,
    superheatK: r.suctionLineC - satC,
    valvePercent: r.valveSteps === undefined ? null : (100 * r.valveSteps) / m.params.valveFullSteps,
    compressorOn: r.compressorOn,
    fanOn: r.fanOn,
    defrostOn: r.defrostOn,
    doorOpen: r.doorOpen,
  };
}

/** Runs a simulated box for hours with 10-s readings (optionally with a fault from the start) and returns the raises. */
function simulate(kind: 'cooler' | 'freezer', hours: number, fault?: FaultName): ConditionEvent[] {
  const m = makeBox({ kind });
  if (fault) m.setFault(fault, true);
  const e = new BoxRuleEngine(settingsOf(m));
  const events: ConditionEvent[] = [];
  for (let i = 0; i < hours * 360; i++) {
    m.step(10);
    events.push(...e.onReading(ruleReading(m)));
  }
  return events.filter((ev) => ev.kind === 'raise');
}

const rules = (evs: ConditionEvent[]) => [...new Set(evs.map((e) => e.ruleId))].sort();

describe('rules on the simulator (simulator/model, read only)', () => {
  it('stay quiet on a healthy cooler for 12 h of cycling and defrosts', () => {
    expect(rules(simulate('cooler', 12))).toEqual([]);
  });

  it('stay quiet on a healthy freezer for 26 h of cycling and four defrosts', () => {
    expect(rules(simulate('freezer', 26))).toEqual([]);
  });

  it('raise superheat-high on the low-charge fault', () => {
    expect(rules(simulate('cooler', 6, 'low-charge'))).toContain('superheat-high');
  });

  it('raise pump-down-failure on the valve-leak-through fault', () => {
    expect(rules(simulate('cooler', 6, 'valve-leak-through'))).toContain('pump-down-failure');
  });

  it('raise door-open on the door-ajar fault', () => {
    expect(rules(simulate('cooler', 2, 'door-ajar'))).toContain('door-open');
  });

  it('raise short-cycling on the short-cycling fault', () => {
    expect(rules(simulate('cooler', 3, 'short-cycling'))).toContain('short-cycling');
  });

  it('raise sensor-fault, and not box-air-high, on an open box-air thermistor', () => {
    const m = makeBox({ kind: 'cooler' });
    m.setFault('thermistor-open', true, 'boxAirC');
    const e = new BoxRuleEngine(settingsOf(m));
    const raised: string[] = [];
    for (let i = 0; i < 360; i++) {
      m.step(10);
      for (const ev of e.onReading(ruleReading(m))) if (ev.kind === 'raise') raised.push(ev.ruleId);
    }
    expect(raised).toContain('sensor-fault');
    expect(raised).not.toContain('box-air-high');
  });

  it('raise sensor-fault on a box-air thermistor stuck at its value when the fault began, whatever the compressor then does', () => {
    const m = makeBox({ kind: 'cooler' });
    m.setFault('sensor-stuck', true, 'boxAirC');
    const e = new BoxRuleEngine(settingsOf(m));
    const raised: Array<{ ruleId: string; message: string }> = [];
    for (let i = 0; i < 5 * 360; i++) {
      m.step(10);
      for (const ev of e.onReading(ruleReading(m))) if (ev.kind === 'raise') raised.push({ ruleId: ev.ruleId, message: ev.message });
    }
    expect(raised.find((r) => r.ruleId === 'sensor-fault')?.message).toMatch(/box-air reading has not changed .* the sensor may be stuck/);
  });

  it('raise pump-down-failure on the valve-leak-through-severe fault (pump-down never reaches the cut-out)', () => {
    expect(rules(simulate('cooler', 6, 'valve-leak-through-severe'))).toContain('pump-down-failure');
  });

  it('raise defrost-timed-termination on a freezer whose defrost heater failed', () => {
    expect(rules(simulate('freezer', 26, 'defrost-heater-failed'))).toContain('defrost-timed-termination');
  });
});
