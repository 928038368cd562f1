/** Lengths (site elevation) in the user's unit: ft for imperial, m for metric, on the exact foot. */
import { describe, expect, it } from 'vitest';
import { M_PER_FT, formatLength, ftToM, lengthUnit, mToFt, parseLengthM } from '../../shared/field';

describe('length units', () => {
  it('uses the international foot of exactly 0.3048 m', () => {
    // International yard and pound agreement (1959): 1 yd = 0.9144 m exactly, so 1 ft = 0.3048 m.
    expect(M_PER_FT).toBe(0.3048);
    expect(ftToM(1)).toBe(0.3048);
    // 1 mile = 5280 ft = 1609.344 m exactly (same agreement).
    expect(ftToM(5280)).toBeCloseTo(1609.344, 9);
    expect(mToFt(1609.344)).toBeCloseTo(5280, 9);
  });

  it('shows and reads elevations in feet for imperial and metres for metric', () => {
    expect(lengthUnit('imperial')).toBe('ft');
    expect(lengthUnit('metric-bar')).toBe('m');
    expect(lengthUnit('metric-kpa')).toBe('m');
    // 304.8 m = 1000 ft exactly (1 ft = 0.3048 m, 1959 agreement).
    expect(formatLength(304.8, 'imperial')).toBe('1000 ft');
    expect(formatLength(304.8, 'metric-kpa')).toBe('305 m');
    expect(parseLengthM('1000', 'imperial')).toBeCloseTo(304.8, 9);
    expect(parseLengthM('1600', 'metric-bar')).toBe(1600);
    expect(() => parseLengthM('high', 'imperial')).toThrow(RangeError);
  });
});
