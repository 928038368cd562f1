// The annualizing method of 40 CFR 82.152 ("Leak rate", paragraph (1)) on hand-computed cases, the
// arithmetic written beside each. We do not quote EPA's own worked examples: we do not recall their
// figures reliably, so every expected value here is computed by hand from the rule's four steps.
import { describe, expect, it } from 'vitest';
import {
  addDays,
  annualizedLeakRatePercent,
  kgToLb,
  LEAK_RATE_THRESHOLDS,
  leakRateEvents,
  leakRuleHint,
  lbToKg,
  REPAIR_DEADLINE_DAYS,
  type LeakLogEntry,
} from '../../shared/records/leakRate';

const add = (id: number, date: string, lb: number, extra: Partial<LeakLogEntry> = {}): LeakLogEntry => ({ id, kind: 'addition', date, amountKg: lbToKg(lb), exemption: null, sameLeakAsPrevious: false, ...extra });

describe('annualizedLeakRatePercent (40 CFR 82.152, "Leak rate" (1))', () => {
  it('annualizes 10 lb added to a 100 lb system 30 days after the last addition to 121.67 %', () => {
    // Step 1: 10 / 100 = 0.1. Step 2: min(30, 365) / 365 = 0.08219. Step 3: 0.1 / 0.08219 = 1.21667. Step 4: × 100 = 121.667 %.
    expect(annualizedLeakRatePercent(10, 100, 30)).toBeCloseTo(121.667, 3);
  });

  it('gives 5 % for 20 lb added to a 400 lb system a full year after the last addition', () => {
    // 20 / 400 = 0.05; 365 / 365 = 1; 0.05 / 1 × 100 = 5 %.
    expect(annualizedLeakRatePercent(20, 400, 365)).toBeCloseTo(5, 10);
  });

  it('uses 365 days when the last addition is longer ago (the "shorter of" in Step 2)', () => {
    // min(500, 365) = 365, so the same 5 % as a year: 20 / 400 / (365 / 365) × 100.
    expect(annualizedLeakRatePercent(20, 400, 500)).toBeCloseTo(5, 10);
  });

  it('gives the same rate from kilograms as from pounds (the ratio cancels the unit)', () => {
    // 4 lb in 50 lb over 146 days: 0.08 / (146 / 365 = 0.4) × 100 = 20 %.
    expect(annualizedLeakRatePercent(lbToKg(4), lbToKg(50), 146)).toBeCloseTo(20, 10);
    expect(annualizedLeakRatePercent(4, 50, 146)).toBeCloseTo(20, 10);
  });

  it('refuses a zero full charge instead of dividing by it', () => {
    expect(() => annualizedLeakRatePercent(1, 0, 30)).toThrow(RangeError);
  });
});

describe('leakRateEvents', () => {
  it('flags 121.67 % over the 20 % commercial refrigeration threshold with a repair deadline 30 days after the addition', () => {
    // 40 CFR 82.157(c)(2)(i): 20 %; 82.157(d)(1): 30 days (from memory). 2026-03-11 + 30 days = 2026-04-10.
    const events = leakRateEvents({ fullChargeKg: lbToKg(100), applianceType: 'commercial-refrigeration', fullChargeDate: null, entries: [add(1, '2026-02-09', 5), add(2, '2026-03-11', 10)] });
    const last = events[events.length - 1]!;
    expect(last.daysSinceLastAddition).toBe(30); // 2026-02-09 → 2026-03-11: 19 days of February + 11 of March
    expect(last.leakRatePercent).toBeCloseTo(121.667, 3);
    expect(last.overThreshold).toBe(true);
    expect(last.repairDueDate).toBe('2026-04-10');
    expect(REPAIR_DEADLINE_DAYS).toBe(30); // 40 CFR 82.157(d)(1), from memory
  });

  it('gives no deadline at exactly the threshold, since the rule acts on a rate over it', () => {
    // 4 lb / 50 lb over 146 days: 0.08 / 0.4 × 100 = 20 %; commercial refrigeration 20 % (82.157(c)(2)(i)) is not exceeded,
    // comfort cooling 10 % (82.157(c)(2)(iii)) is: deadline 2026-06-27 + 30 = 2026-07-27.
    const entries = [add(1, '2026-02-01', 4, { exemption: 'new-installation' }), add(2, '2026-06-27', 4)];
    expect(LEAK_RATE_THRESHOLDS['commercial-refrigeration'].percent).toBe(20); // 40 CFR 82.157(c)(2)(i)
    const commercial = leakRateEvents({ fullChargeKg: lbToKg(50), applianceType: 'commercial-refrigeration', fullChargeDate: null, entries });
    expect(commercial).toHaveLength(1); // the exempt first addition (82.157(b)) is not rated
    expect(commercial[0]!.daysSinceLastAddition).toBe(146); // Feb 27 + Mar 31 + Apr 30 + May 31 + Jun 27
    expect(commercial[0]!.leakRatePercent).toBeCloseTo(20, 9);
    expect(commercial[0]!.overThreshold).toBe(false);
    expect(commercial[0]!.repairDueDate).toBeNull();
    const comfort = leakRateEvents({ fullChargeKg: lbToKg(50), applianceType: 'comfort-cooling', fullChargeDate: null, entries });
    expect(LEAK_RATE_THRESHOLDS['comfort-cooling'].percent).toBe(10); // 40 CFR 82.157(c)(2)(iii)
    expect(comfort[0]!.overThreshold).toBe(true);
    expect(comfort[0]!.repairDueDate).toBe('2026-07-27');
  });

  it('sums additions for the same leak and counts days from the addition before them', () => {
    // 5 lb + 3 lb = 8 lb into 80 lb (0.1) over 100 days (2026-01-01 → 2026-04-11): 0.1 / (100 / 365) × 100 = 36.5 %,
    // over 30 % industrial process refrigeration (82.157(c)(2)(ii)); deadline from the last addition 2026-04-13 + 30.
    const events = leakRateEvents({
      fullChargeKg: lbToKg(80),
      applianceType: 'industrial-process-refrigeration',
      fullChargeDate: null,
      entries: [add(1, '2026-01-01', 2, { exemption: 'seasonal-variance' }), add(2, '2026-04-11', 5), add(3, '2026-04-13', 3, { sameLeakAsPrevious: true })],
    });
    expect(events).toHaveLength(1);
    expect(events[0]!.entryIds).toEqual([2, 3]);
    expect(kgToLb(events[0]!.addedKg)).toBeCloseTo(8, 9);
    expect(events[0]!.daysSinceLastAddition).toBe(100);
    expect(events[0]!.leakRatePercent).toBeCloseTo(36.5, 9);
    expect(events[0]!.overThreshold).toBe(true);
    expect(events[0]!.repairDueDate).toBe(addDays('2026-04-13', 30));
    expect(events[0]!.repairDueDate).toBe('2026-05-13');
  });

  it('starts the first interval at the full-charge date, or uses 365 days when the log has none', () => {
    // 6 lb into 120 lb (0.05) 73 days after the full charge: 0.05 / (73 / 365 = 0.2) × 100 = 25 %.
    const fromCharge = leakRateEvents({ fullChargeKg: lbToKg(120), applianceType: 'commercial-refrigeration', fullChargeDate: '2026-01-01', entries: [add(1, '2026-03-15', 6)] });
    expect(fromCharge[0]!.intervalFrom).toBe('full-charge-date');
    expect(fromCharge[0]!.daysSinceLastAddition).toBe(73);
    expect(fromCharge[0]!.leakRatePercent).toBeCloseTo(25, 9);
    // Unknown start: Step 2 takes 365, 0.05 × 100 = 5 %.
    const unknown = leakRateEvents({ fullChargeKg: lbToKg(120), applianceType: 'commercial-refrigeration', fullChargeDate: null, entries: [add(1, '2026-03-15', 6)] });
    expect(unknown[0]!.intervalFrom).toBe('unknown');
    expect(unknown[0]!.daysUsed).toBe(365);
    expect(unknown[0]!.leakRatePercent).toBeCloseTo(5, 9);
  });

  it('leaves recoveries out of the rate', () => {
    const entries: LeakLogEntry[] = [add(1, '2026-01-01', 1), { id: 2, kind: 'recovery', date: '2026-01-10', amountKg: lbToKg(40), exemption: null, sameLeakAsPrevious: false }, add(3, '2026-01-31', 1)];
    const events = leakRateEvents({ fullChargeKg: lbToKg(100), applianceType: 'commercial-refrigeration', fullChargeDate: null, entries });
    // 1 / 100 over 30 days (2026-01-01 → 01-31): 0.01 / (30 / 365) × 100 = 12.167 %
    expect(events.map((e) => e.entryId)).toEqual([1, 3]);
    expect(events[1]!.leakRatePercent).toBeCloseTo(12.1667, 3);
  });
});

describe('leakRuleHint', () => {
  it('points an HCFC system of 50 lb or more at 40 CFR 82.157 and says the rules decide', () => {
    const h = leakRuleHint('R-22', 1810, lbToKg(60));
    expect(h.regime).toBe('part-82-ods');
    expect(h.chargeFromLb).toBe(50); // 40 CFR 82.157(a)
    expect(h.chargeReaches).toBe(true);
    expect(h.text).toMatch(/certified technician decide/);
  });

  it('points an HFC blend at part 84 from 15 lb and a natural refrigerant at no known rule', () => {
    expect(leakRuleHint('R-448A', 1387, lbToKg(14)).chargeReaches).toBe(false); // 15 lb: 40 CFR part 84 subpart C, from memory
    expect(leakRuleHint('R-448A', 1387, lbToKg(16)).regime).toBe('part-84-hfc');
    expect(leakRuleHint('R-744', 1, lbToKg(200)).regime).toBe('none-known');
  });
});
