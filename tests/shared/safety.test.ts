import { describe, expect, it } from 'vitest';
import { CAUTIONS, cautionsForRefrigerant } from '../../shared/safety';
import { REFRIGERANT_IDS, UnknownRefrigerantError, type RefrigerantId } from '../../shared/refrigerants/index';

const keys = (id: RefrigerantId): string[] => cautionsForRefrigerant(id).map((c) => c.key);

describe('safety cautions', () => {
  it('has a title and text for every situation', () => {
    for (const [key, c] of Object.entries(CAUTIONS)) {
      expect(c.key).toBe(key);
      expect(c.title.length).toBeGreaterThan(3);
      expect(c.text.length).toBeGreaterThan(60);
    }
  });

  it('always includes refrigerant handling and the not-a-diagnosis notice', () => {
    for (const id of REFRIGERANT_IDS) {
      expect(keys(id)).toContain('refrigerantHandling');
      expect(keys(id)).toContain('notADiagnosis');
    }
  });

  it('adds the flammable caution for A2L and A3 refrigerants only', () => {
    // ASHRAE 34 classes (from memory): R-290/R-600a A3; R-32, R-454C, R-455A, R-1234yf A2L; R-404A, R-448A A1.
    for (const id of ['R-290', 'R-600a', 'R-32', 'R-454C', 'R-455A', 'R-1234yf'] as const) expect(keys(id)).toContain('flammable');
    for (const id of ['R-404A', 'R-448A', 'R-134a', 'R-744'] as const) expect(keys(id)).not.toContain('flammable');
  });

  it('adds toxic and flammable for ammonia (B2L)', () => {
    // ASHRAE 34 (from memory): R-717 is B2L, higher toxicity and lower flammability.
    expect(keys('R-717')).toEqual(expect.arrayContaining(['toxic', 'flammable']));
  });

  it('adds the high-pressure caution for R-744 with the triple point figures', () => {
    expect(keys('R-744')[0]).toBe('highPressure');
    // r744.com (TRADE-NOTES #29): triple point about 5.2 bar abs / 60.4 psig; dry ice below it.
    expect(CAUTIONS.highPressure.text).toContain('5.2 bar');
    expect(CAUTIONS.highPressure.text).toContain('60 psig');
    expect(CAUTIONS.highPressure.text).toContain('dry ice');
    expect(keys('R-404A')).not.toContain('highPressure');
  });

  it('covers electrical isolation and food safety', () => {
    // OSHA 29 CFR 1910.147 lockout/tagout; FDA Food Code §3-501.16 measures the food (TRADE-NOTES §6).
    expect(CAUTIONS.electrical.text).toMatch(/Lock out and tag out/);
    expect(CAUTIONS.electrical.text).toMatch(/never isolation/);
    expect(CAUTIONS.foodSafety.text).toMatch(/calibrated probe/);
  });

  it('refuses an unknown refrigerant', () => {
    expect(() => cautionsForRefrigerant('R-12' as RefrigerantId)).toThrow(UnknownRefrigerantError);
  });
});
