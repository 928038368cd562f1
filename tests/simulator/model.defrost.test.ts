import { describe, expect, it } from 'vitest';
import type { DefrostPhase } from '../../simulator/model/defrost';
import { makeBox } from './helpers';

interface PhaseSpan {
  phase: DefrostPhase;
  fromS: number;
  toS: number;
  heater: boolean[];
  fans: boolean[];
  compressor: boolean[];
  coilC: number[];
  frostKg: number[];
}

/** Forces a defrost at the current time and records each phase until the box is back in normal running. */
function recordDefrost(box: ReturnType<typeof makeBox>): PhaseSpan[] {
  box.defrost.startNow(box.tS);
  const spans: PhaseSpan[] = [];
  for (let i = 0; i < 4 * 3600; i++) {
    box.step(1);
    const phase = box.defrost.phase;
    let span = spans.at(-1);
    if (!span || span.phase !== phase) {
      span = { phase, fromS: box.tS, toS: box.tS, heater: [], fans: [], compressor: [], coilC: [], frostKg: [] };
      spans.push(span);
    }
    span.toS = box.tS;
    span.heater.push(box.heaterOn);
    span.fans.push(box.fanOn);
    span.compressor.push(box.compressorOn);
    span.coilC.push(box.phys.coilC);
    span.frostKg.push(box.phys.frostKg);
    if (phase === 'none' && spans.length > 1 && box.tS - span.fromS > 600) break;
  }
  return spans;
}

describe('electric defrost of a walk-in freezer', () => {
  it('heats until the coil reaches its termination temperature, then drips, then holds the fans until the coil is cold', () => {
    // Termination at 10 °C coil (~50 °F), fail-safe 40 min inside 35–45 min, fans back at −4 °C coil (TRADE-NOTES §2: walk-in I&O manual; hvacfun).
    // A long interval keeps the schedule from defrosting before the forced one.
    const box = makeBox({ kind: 'freezer', defrostTerminationC: 10, defrostMaxMin: 40, dripMin: 3, fanDelayMin: 5, defrostIntervalH: 24 });
    box.step(5 * 3600 - 60); // frost builds up over a normal interval
    expect(box.phys.frostKg).toBeGreaterThan(0.3);
    const spans = recordDefrost(box);
    const phases = spans.map((s) => s.phase);
    expect(phases.slice(0, 4)).toEqual(['defrost', 'drip', 'fan-delay', 'none']);
    const [heat, drip, fanDelay] = spans as [PhaseSpan, PhaseSpan, PhaseSpan];

    const record = box.defrost.history.at(-1);
    expect(record?.reason).toBe('temperature');
    expect(record?.maxCoilC).toBeGreaterThanOrEqual(10);
    expect(heat.toS - heat.fromS).toBeLessThan(40 * 60);
    expect(heat.heater.some(Boolean)).toBe(true);
    expect(heat.fans.some(Boolean)).toBe(false);
    // The frost is gone by the end of the heated phase.
    expect(heat.frostKg.at(-1)).toBe(0);

    expect(drip.toS - drip.fromS).toBeGreaterThanOrEqual(3 * 60 - 2);
    expect(drip.toS - drip.fromS).toBeLessThanOrEqual(3 * 60 + 2);
    expect(drip.heater.some(Boolean) || drip.fans.some(Boolean) || drip.compressor.some(Boolean)).toBe(false);

    expect(fanDelay.compressor.some(Boolean)).toBe(true);
    expect(fanDelay.fans.some(Boolean)).toBe(false);
    // Fans came back because the coil was cold again, before the 5-min limit.
    expect(fanDelay.toS - fanDelay.fromS).toBeLessThan(5 * 60);
    expect(fanDelay.coilC.at(-1)).toBeLessThanOrEqual(-4);
    expect(fanDelay.coilC[0]).toBeGreaterThan(-4);
  });

  it('ends on the time limit when the termination temperature cannot be reached', () => {
    const box = makeBox({ kind: 'freezer', defrostTerminationC: 30, defrostMaxMin: 12 });
    box.step(3 * 3600);
    recordDefrost(box);
    const record = box.defrost.history.at(-1);
    expect(record?.reason).toBe('time');
    expect((record?.endS ?? 0) - (record?.startS ?? 0)).toBeCloseTo(12 * 60, -1);
  });
});

describe('off-cycle defrost of a walk-in cooler', () => {
  it('stops the compressor and keeps the fans running', () => {
    // Off-cycle: compressor off, fans on, box air melts the frost (TRADE-NOTES §2, ACHR 110983).
    const box = makeBox({ kind: 'cooler', defrostType: 'off-cycle', defrostMaxMin: 30 });
    box.step(2 * 3600);
    const spans = recordDefrost(box);
    const heat = spans.find((s) => s.phase === 'defrost');
    expect(heat).toBeDefined();
    if (!heat) return;
    expect(heat.fans.every(Boolean)).toBe(true);
    expect(heat.heater.some(Boolean)).toBe(false);
    // After the pump-down that begins it, the compressor stays off.
    const firstOff = heat.compressor.indexOf(false);
    expect(firstOff).toBeGreaterThanOrEqual(0);
    expect(heat.compressor.slice(firstOff).some(Boolean)).toBe(false);
    expect(heat.toS - heat.fromS).toBeLessThanOrEqual(30 * 60 + 1);
    expect(spans.some((s) => s.phase === 'fan-delay')).toBe(false);
  });
});
