// The box model against its golden trace (tests/simulator/goldenTrace.ts): the fixture was recorded
// from the model before its step was made faster, so this test fails on any change to what the
// model simulates. The speed work is meant to be exact (same operations, same order, same
// saturation engine), so the tolerances are tight: 1e-6 on every state (°C, K, kPa, kg, J), exact
// for every on/off state, EEV step count, start count and defrost end reason.
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { FLAG_COLUMNS, GOLDEN_CASES, GOLDEN_FIXTURE, GOLDEN_SAMPLE_S, NUMBER_COLUMNS, traceCase, type GoldenTrace } from './goldenTrace';

const STATE_TOLERANCE = 1e-6;
const golden = JSON.parse(readFileSync(GOLDEN_FIXTURE, 'utf8')) as { sampleS: number; decimals: number; traces: GoldenTrace[] };

/** The first sample where `got` leaves `want`, as a sentence; null when the traces agree. */
function firstDivergence(want: GoldenTrace, got: GoldenTrace): string | null {
  if (got.tS.length !== want.tS.length) return `${got.tS.length} samples instead of ${want.tS.length}`;
  for (let i = 0; i < want.tS.length; i++) {
    const at = `at t = ${want.tS[i]} s`;
    if (Math.abs((got.tS[i] ?? NaN) - (want.tS[i] ?? NaN)) > STATE_TOLERANCE) return `${at}: model time ${got.tS[i]}`;
    for (const k of NUMBER_COLUMNS) {
      const w = want.numbers[k][i] ?? NaN;
      const g = got.numbers[k][i] ?? NaN;
      if (!(Math.abs(g - w) <= STATE_TOLERANCE)) return `${at}: ${k} ${g} instead of ${w}`;
    }
    if (got.valveSteps[i] !== want.valveSteps[i]) return `${at}: valve steps ${got.valveSteps[i]} instead of ${want.valveSteps[i]}`;
    const flips = (got.flags[i] ?? 0) ^ (want.flags[i] ?? 0);
    if (flips !== 0) return `${at}: ${FLAG_COLUMNS.filter((_, bit) => flips & (1 << bit)).join(', ')} differ`;
  }
  return null;
}

describe('the box model against its golden trace', () => {
  it('covers compressor cycles, a defrost, door openings and heater time in its fixture', () => {
    // Guards the fixture itself: a trace without these would not exercise the paths it is meant to pin.
    expect(golden.sampleS).toBe(GOLDEN_SAMPLE_S);
    expect(golden.traces.map((t) => t.name)).toEqual(GOLDEN_CASES.map((c) => c.name));
    for (const t of golden.traces) {
      const count = (bit: number) => t.flags.filter((f) => f & (1 << bit)).length;
      expect(t.compressorStarts).toBeGreaterThanOrEqual(5);
      expect(t.defrosts.length).toBeGreaterThanOrEqual(1);
      expect(count(FLAG_COLUMNS.indexOf('doorOpen'))).toBeGreaterThan(0);
    }
    const freezer = golden.traces[1] as GoldenTrace;
    expect(freezer.flags.filter((f) => f & (1 << FLAG_COLUMNS.indexOf('heaterOn'))).length).toBeGreaterThan(0);
  });

  for (const [i, c] of GOLDEN_CASES.entries()) {
    it(`reproduces ${c.name} for ${c.hours} h, sample by sample`, () => {
      const want = golden.traces[i] as GoldenTrace;
      const got = traceCase(c);
      expect(firstDivergence(want, got)).toBeNull();
      expect(got.compressorStarts).toBe(want.compressorStarts);
      expect(Math.abs(got.compressorRunS - want.compressorRunS)).toBeLessThanOrEqual(STATE_TOLERANCE);
      expect(got.defrosts.map((d) => d.reason)).toEqual(want.defrosts.map((d) => d.reason));
      expect(got.defrosts.map((d) => [d.startS, d.endS])).toEqual(want.defrosts.map((d) => [d.startS, d.endS]));
    });
  }
});
