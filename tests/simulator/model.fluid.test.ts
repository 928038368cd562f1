// The simulator's refrigerant adapter (simulator/model/fluid.ts) remembers each conversion's last
// answer to save calls into the shared engine. These tests pin that it still answers exactly what
// the engine answers (shared/refrigerants, CoolProp 8.0.0 tables), in any order of calls.
import { describe, expect, it } from 'vitest';
import { REFRIGERANT_IDS, getRefrigerant, saturationPressure, saturationTemperature } from '../../shared/refrigerants';
import { absoluteToGaugeKPa } from '../../shared/field/pressure';
import { Fluid } from '../../simulator/model/fluid';
import { SeededRng } from '../../simulator/model/rng';

describe('Fluid', () => {
  it('wiring: answers bit for bit what the shared engine answers, for every refrigerant, with repeats and interleaved curves', () => {
    const rng = new SeededRng(5);
    for (const id of REFRIGERANT_IDS) {
      const info = getRefrigerant(id);
      const fluid = new Fluid(id, 250);
      const { minC, maxC } = info.validRange;
      const pLo = Math.max(info.validPressureKPaAbs.dew.min, info.validPressureKPaAbs.bubble.min);
      const pHi = Math.min(info.validPressureKPaAbs.dew.max, info.validPressureKPaAbs.bubble.max);
      let lastP = pLo;
      let lastT = minC;
      for (let i = 0; i < 400; i++) {
        // Half the time the same input again (what the model does within a step), else a new one.
        const p = rng.next() < 0.5 ? lastP : pLo * Math.pow(pHi / pLo, rng.next());
        const t = rng.next() < 0.5 ? lastT : minC + (maxC - minC) * rng.next();
        lastP = p;
        lastT = t;
        const order = Math.floor(rng.next() * 4);
        const calls = [
          () => expect(fluid.dewC(p)).toBe(saturationTemperature(id, p, 'dew')),
          () => expect(fluid.bubbleC(p)).toBe(saturationTemperature(id, p, 'bubble')),
          () => expect(fluid.dewKPaAbs(t)).toBe(saturationPressure(id, t, 'dew')),
          () => expect(fluid.bubbleKPaAbs(t)).toBe(saturationPressure(id, t, 'bubble')),
        ];
        for (let k = 0; k < calls.length; k++) calls[(k + order) % calls.length]?.();
      }
    }
  });

  it('keeps the dew and bubble answers apart at the same pressure on a zeotrope', () => {
    // R-448A is a zeotrope (data.generated.ts header, CoolProp 8.0.0 mixture model): its glide at −10 °C dew
    // is the engine's glideK, several K; a memo shared by both curves would return one answer for the other.
    const fluid = new Fluid('R-448A', 0);
    const glideK = getRefrigerant('R-448A').glideK;
    const p = saturationPressure('R-448A', -10, 'dew');
    const dew = fluid.dewC(p);
    const bubble = fluid.bubbleC(p);
    expect(glideK).toBeGreaterThan(3);
    expect(dew).toBeCloseTo(-10, 5); // the engine's forward and inverse tables agree to well under 0.001 K (shared/refrigerants/index.ts)
    expect(dew - bubble).toBeCloseTo(glideK, 3);
    expect(fluid.dewC(p)).toBe(dew);
    expect(fluid.bubbleC(p)).toBe(bubble);
  });

  it('converts gauge pressure exactly as shared/field/pressure does at the site elevation, and still refuses a non-finite pressure', () => {
    const fluid = new Fluid('R-404A', 1524);
    for (const kPaAbs of [0, 84.3, 101.325, 350.125, 2400]) expect(fluid.toGaugeKPa(kPaAbs)).toBe(absoluteToGaugeKPa(kPaAbs, 1524));
    expect(() => fluid.toGaugeKPa(Number.NaN)).toThrow(RangeError);
    expect(() => fluid.toGaugeKPa(Number.POSITIVE_INFINITY)).toThrow(RangeError);
  });

  it('still refuses NaN, also right after a valid call (a NaN never matches the remembered input)', () => {
    const fluid = new Fluid('R-134a', 0);
    fluid.dewC(300);
    expect(() => fluid.dewC(Number.NaN)).toThrow();
    expect(() => fluid.dewKPaAbs(Number.NaN)).toThrow();
    expect(fluid.dewC(300)).toBe(saturationTemperature('R-134a', 300, 'dew'));
  });
});
