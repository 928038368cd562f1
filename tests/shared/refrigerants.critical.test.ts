import { describe, expect, it } from 'vitest';
import {
  RefrigerantRangeError,
  SupercriticalError,
  getRefrigerant,
  isSupercriticalPressure,
  listRefrigerants,
  saturationPressure,
  saturationTemperature,
  type RefrigerantId,
} from '../../shared/refrigerants/index';

describe('supercritical R-744', () => {
  // CoolProp 8.0.0 / NIST WebBook: CO₂ critical pressure 7,377.3 kPa abs, critical temperature 30.978 °C.
  it('says supercritical, not out of range, above the critical pressure', () => {
    for (const kPa of [7377.3, 7500, 9000, 12_000]) {
      let err: unknown = null;
      try {
        saturationTemperature('R-744', kPa, 'bubble');
      } catch (e) {
        err = e;
      }
      expect(err, `${kPa} kPa`).toBeInstanceOf(SupercriticalError);
      expect((err as SupercriticalError).code).toBe('supercritical');
      expect((err as SupercriticalError).message).toContain('supercritical');
      expect(isSupercriticalPressure('R-744', kPa)).toBe(true);
    }
    // 9,000 kPa abs (a typical warm-day gas-cooler pressure, about 90 bar; common practice) on the dew curve too.
    expect(() => saturationTemperature('R-744', 9000, 'dew')).toThrow(SupercriticalError);
  });

  it('says supercritical above the critical temperature', () => {
    for (const c of [31, 35, 40]) expect(() => saturationPressure('R-744', c, 'bubble'), `${c} °C`).toThrow(SupercriticalError);
  });

  it('keeps the plain range error, code out-of-range, below the triple point and for blends', () => {
    try {
      saturationTemperature('R-744', 400, 'dew'); // below the 517.96 kPa abs triple point (CoolProp 8.0.0)
      expect.unreachable('should have thrown');
    } catch (e) {
      expect(e).toBeInstanceOf(RefrigerantRangeError);
      expect(e).not.toBeInstanceOf(SupercriticalError);
      expect((e as RefrigerantRangeError).code).toBe('out-of-range');
    }
    // Blends carry no critical point here: above their tables it is out of range, never "supercritical".
    expect(getRefrigerant('R-404A').critical).toBeNull();
    expect(isSupercriticalPressure('R-404A', 1e5)).toBe(false);
    expect(() => saturationTemperature('R-404A', 1e5, 'bubble')).toThrow(RefrigerantRangeError);
    expect(() => saturationTemperature('R-404A', 1e5, 'bubble')).not.toThrow(SupercriticalError);
    // Below the critical pressure R-744 has a saturation temperature: 7,213.7 kPa abs is 30 °C (CoolProp 8.0.0).
    expect(isSupercriticalPressure('R-744', 7213.7)).toBe(false);
    expect(Math.abs(saturationTemperature('R-744', 7213.7, 'bubble') - 30)).toBeLessThanOrEqual(0.01);
  });
});

describe('hot-day range', () => {
  it('covers condensing up to a few kelvin below the critical point or the mixture model\'s limit', () => {
    // Critical temperatures, °C, CoolProp 8.0.0 (NIST WebBook agrees to 0.1 K, from memory).
    const tc: Partial<Record<RefrigerantId, number>> = {
      'R-134a': 101.06, 'R-22': 96.15, 'R-32': 78.11, 'R-290': 96.74, 'R-600a': 134.66, 'R-717': 132.41, 'R-1234yf': 94.7,
    };
    for (const [id, c] of Object.entries(tc) as [RefrigerantId, number][]) {
      const info = getRefrigerant(id);
      expect(Math.abs((info.critical?.temperatureC ?? 0) - c), id).toBeLessThanOrEqual(0.01);
      expect(c - info.validRange.maxC, id).toBeGreaterThan(0);
      expect(c - info.validRange.maxC, id).toBeLessThanOrEqual(3.5);
      expect(info.upperLimit, id).toContain('critical point');
    }
    // Air-cooled condensing at 55–60 °C on hot days (common practice): inside every table but R-744's.
    for (const r of listRefrigerants()) {
      if (r.id === 'R-744') continue;
      expect(r.validRange.maxC, r.id).toBeGreaterThanOrEqual(65);
      expect(() => saturationPressure(r.id, 60, 'bubble'), r.id).not.toThrow();
      expect(r.upperLimit.length, r.id).toBeGreaterThan(20);
    }
  });

  it('states where and why a table ends when a value lies above it, instead of clamping', () => {
    expect(() => saturationTemperature('R-404A', 1e5, 'bubble')).toThrow(/mixture model converged/);
    // 30.95 °C is below CO₂'s 30.978 °C critical point (CoolProp 8.0.0) but past the table: out of range, not supercritical.
    expect(() => saturationPressure('R-744', 30.95, 'dew')).toThrow(/0\.08 K below the critical point/);
    expect(() => saturationPressure('R-744', 30.95, 'dew')).not.toThrow(SupercriticalError);
  });
});
