// Leak rate of a refrigeration system by the annualizing method of the US EPA refrigerant
// management rules, with the leak-rate threshold of the appliance type and the repair deadline.
// Pure: no I/O, usable by the server (DTOs) and the client (preview). Masses are kg in storage;
// the rate is a ratio of two masses, so the unit cancels (kg/kg = lb/lb).
//
// Sources (checked against a published copy of the eCFR text, 2026-12-03, unless marked):
// - 40 CFR 82.152, definition of "Leak rate", paragraph (1) "Annualizing method": Step 1 pounds
//   added to return the appliance to full charge (one addition, or several related to the same
//   leak) ÷ pounds at full charge; Step 2 the shorter of the days since the last day refrigerant
//   was added or 365 days, ÷ 365; Step 3 Step 1 ÷ Step 2; Step 4 × 100 %. Paragraph (2) is the
//   rolling-average method, which Rimehold does not compute.
// - 40 CFR 82.157(b): the leak rate is calculated every time refrigerant is added, unless the
//   addition immediately follows a retrofit, the installation of a new appliance, or qualifies as a
//   seasonal variance.
// - 40 CFR 82.157(c)(2)(i)-(iii): thresholds 20 % commercial refrigeration, 30 % industrial process
//   refrigeration, 10 % comfort cooling (and other appliances); an appliance "over" the rate must
//   be repaired (or retrofitted or retired).
// - 40 CFR 82.157(d)(1): repair within 30 days of discovering the rate was exceeded (from memory;
//   the industrial-process extensions of 82.157(d)(2) and (i) are not modelled).
// - 40 CFR 82.157(a): since 2020-04-10 it applies to appliances with 50 lb or more of class I or II
//   (ozone-depleting) refrigerant only. 40 CFR part 84 subpart C (the 2024 AIM Act emissions
//   reduction rule) brings leak repair back for HFCs and substitutes with a GWP above 53 in
//   appliances with 15 lb or more from 2026-01-01, with the same rates (from memory: check the
//   current text). Whether any rule applies is for the owner, the rules and a certified technician.

/** kg in one avoirdupois pound (exact by definition: international yard and pound agreement, 1959). */
export const KG_PER_LB = 0.45359237;

/** lb → kg. */
export function lbToKg(lb: number): number {
  return lb * KG_PER_LB;
}
/** kg → lb. */
export function kgToLb(kg: number): number {
  return kg / KG_PER_LB;
}

/** Mass units a technician enters. */
export const MASS_UNITS = ['lb', 'kg'] as const;
export type MassUnit = (typeof MASS_UNITS)[number];

/** The mass unit of a unit-system preference: lb for imperial, kg for the metric ones. */
export function massUnitFor(system: 'imperial' | 'metric-bar' | 'metric-kpa'): MassUnit {
  return system === 'imperial' ? 'lb' : 'kg';
}
/** A mass in kg shown in a unit, e.g. "12.5 lb" (digits after the point). */
export function formatMass(kg: number, unit: MassUnit, digits = 2): string {
  const v = unit === 'lb' ? kgToLb(kg) : kg;
  return `${v.toFixed(digits)} ${unit}`;
}
/** A mass entered in a unit, in kg. */
export function toKg(amount: number, unit: MassUnit): number {
  return unit === 'lb' ? lbToKg(amount) : amount;
}

/** Appliance types of 40 CFR 82.157(c)(2), each with its own leak-rate threshold. */
export const APPLIANCE_TYPES = ['commercial-refrigeration', 'industrial-process-refrigeration', 'comfort-cooling'] as const;
export type ApplianceType = (typeof APPLIANCE_TYPES)[number];

export interface LeakRateThreshold {
  readonly percent: number;
  readonly label: string;
  readonly source: string;
}

/** Leak-rate thresholds, % per year (40 CFR 82.157(c)(2)(i)-(iii)). */
export const LEAK_RATE_THRESHOLDS: Readonly<Record<ApplianceType, LeakRateThreshold>> = Object.freeze({
  'commercial-refrigeration': { percent: 20, label: 'Commercial refrigeration', source: '40 CFR 82.157(c)(2)(i)' },
  'industrial-process-refrigeration': { percent: 30, label: 'Industrial process refrigeration', source: '40 CFR 82.157(c)(2)(ii)' },
  'comfort-cooling': { percent: 10, label: 'Comfort cooling', source: '40 CFR 82.157(c)(2)(iii)' },
});

/** Days to repair once the rate is over the threshold (40 CFR 82.157(d)(1), from memory). */
export const REPAIR_DEADLINE_DAYS = 30;
export const REPAIR_DEADLINE_SOURCE = '40 CFR 82.157(d)(1)';
/** Where the formula comes from. */
export const LEAK_RATE_METHOD_SOURCE = '40 CFR 82.152, "Leak rate", paragraph (1) (annualizing method)';

/** Additions for which 40 CFR 82.157(b) asks no leak-rate calculation. */
export const LEAK_RATE_EXEMPTIONS = ['after-retrofit', 'new-installation', 'seasonal-variance'] as const;
export type LeakRateExemption = (typeof LEAK_RATE_EXEMPTIONS)[number];

const DAY_MS = 86_400_000;

/** Whole days from one calendar date (YYYY-MM-DD) to another (may be negative). */
export function daysBetween(fromDate: string, toDate: string): number {
  return Math.round((Date.parse(`${toDate}T00:00:00Z`) - Date.parse(`${fromDate}T00:00:00Z`)) / DAY_MS);
}
/** The calendar date (YYYY-MM-DD) `days` after a date. */
export function addDays(date: string, days: number): string {
  return new Date(Date.parse(`${date}T00:00:00Z`) + days * DAY_MS).toISOString().slice(0, 10);
}

/**
 * Leak rate, % per year, by the annualizing method: (added ÷ full charge) ÷ (min(days, 365) ÷ 365)
 * × 100. `added` and `fullCharge` in the same mass unit; `daysSinceLastAddition` in days, where a
 * same-day addition counts as one day (our choice: the rule divides by days and a day is the
 * smallest step a log entry has). RangeError on a non-positive charge or a negative amount.
 */
export function annualizedLeakRatePercent(added: number, fullCharge: number, daysSinceLastAddition: number): number {
  if (!(fullCharge > 0) || !Number.isFinite(fullCharge)) throw new RangeError(`full charge must be positive, got ${String(fullCharge)}`);
  if (!(added >= 0) || !Number.isFinite(added)) throw new RangeError(`amount added must be zero or more, got ${String(added)}`);
  if (!Number.isFinite(daysSinceLastAddition)) throw new RangeError(`days must be finite, got ${String(daysSinceLastAddition)}`);
  const days = Math.min(Math.max(daysSinceLastAddition, 1), 365);
  return (added / fullCharge / (days / 365)) * 100;
}

/** One addition or recovery as the calculation reads it. */
export interface LeakLogEntry {
  readonly id: number;
  readonly kind: 'addition' | 'recovery';
  /** Calendar date of the work, YYYY-MM-DD. */
  readonly date: string;
  readonly amountKg: number;
  /** An addition 82.157(b) exempts from the calculation, or null. */
  readonly exemption: LeakRateExemption | null;
  /** True when this addition and the one before it return the system to full charge after the same leak. */
  readonly sameLeakAsPrevious: boolean;
}

export interface LeakRateEvent {
  /** The addition the rate is reported at (the last of a same-leak group). */
  readonly entryId: number;
  readonly date: string;
  /** Ids of the additions summed (one, or several for the same leak). */
  readonly entryIds: readonly number[];
  readonly addedKg: number;
  /** Days since the last day refrigerant was added before this group; null when the log does not know. */
  readonly daysSinceLastAddition: number | null;
  /** The days the formula used: the shorter of those days and 365 (365 when unknown). */
  readonly daysUsed: number;
  /** Where the start of the interval came from. */
  readonly intervalFrom: 'previous-addition' | 'full-charge-date' | 'unknown';
  readonly leakRatePercent: number;
  readonly thresholdPercent: number;
  /** True when the rate is over the threshold (82.157(c)(1): "over the applicable leak rate"). */
  readonly overThreshold: boolean;
  /** Repair deadline (YYYY-MM-DD) when over the threshold, else null. */
  readonly repairDueDate: string | null;
}

export interface LeakRateInput {
  readonly fullChargeKg: number;
  readonly applianceType: ApplianceType;
  /** When the system last held its full charge from a new installation or a full recharge (YYYY-MM-DD), or null. */
  readonly fullChargeDate: string | null;
  readonly entries: readonly LeakLogEntry[];
}

/**
 * The leak rate at every non-exempt addition of a log (entries in any order; sorted by date, then
 * id). The interval starts at the previous addition of any kind (exempt ones included: refrigerant
 * was added that day), or else at the full-charge date; without either, the shorter-of rule makes
 * it 365 days. Recoveries do not enter the rate.
 */
export function leakRateEvents(input: LeakRateInput): LeakRateEvent[] {
  const threshold = LEAK_RATE_THRESHOLDS[input.applianceType];
  const additions = input.entries.filter((e) => e.kind === 'addition').slice().sort((a, b) => (a.date === b.date ? a.id - b.id : a.date < b.date ? -1 : 1));
  const out: LeakRateEvent[] = [];
  let lastAdditionDate: string | null = null;
  let i = 0;
  while (i < additions.length) {
    // A group: this addition and every following one marked as the same leak.
    const group = [additions[i]!];
    while (i + group.length < additions.length && additions[i + group.length]!.sameLeakAsPrevious) group.push(additions[i + group.length]!);
    i += group.length;
    const first = group[0]!;
    const last = group[group.length - 1]!;
    const start = lastAdditionDate ?? input.fullChargeDate;
    const intervalFrom: LeakRateEvent['intervalFrom'] = lastAdditionDate !== null ? 'previous-addition' : input.fullChargeDate !== null ? 'full-charge-date' : 'unknown';
    lastAdditionDate = last.date;
    const counted = group.filter((e) => e.exemption === null);
    if (counted.length === 0) continue;
    const addedKg = counted.reduce((s, e) => s + e.amountKg, 0);
    const daysSince = start === null ? null : Math.max(0, daysBetween(start, first.date));
    const daysUsed = daysSince === null ? 365 : Math.min(Math.max(daysSince, 1), 365);
    const leakRatePercent = annualizedLeakRatePercent(addedKg, input.fullChargeKg, daysUsed);
    const overThreshold = leakRatePercent > threshold.percent;
    out.push({
      entryId: last.id,
      date: last.date,
      entryIds: counted.map((e) => e.id),
      addedKg,
      daysSinceLastAddition: daysSince,
      daysUsed,
      intervalFrom,
      leakRatePercent,
      thresholdPercent: threshold.percent,
      overThreshold,
      repairDueDate: overThreshold ? addDays(last.date, REPAIR_DEADLINE_DAYS) : null,
    });
  }
  return out;
}

/** Which leak-repair rule could apply, as a hint; the rules, the owner and a certified technician decide. */
export interface LeakRuleHint {
  readonly regime: 'part-82-ods' | 'part-84-hfc' | 'none-known';
  /** Full charge, lb, from which that rule applies. */
  readonly chargeFromLb: number | null;
  /** True when the charge reaches that size. */
  readonly chargeReaches: boolean;
  readonly text: string;
}

/** Ozone-depleting (class II, HCFC) refrigerants among Rimehold's list (R-22 is HCFC-22; common practice). */
const ODS_REFRIGERANTS = new Set(['R-22']);
/** GWP above which part 84 subpart C counts a refrigerant (from memory). */
const PART_84_GWP_ABOVE = 53;

/** A hint of the leak-repair rule for a refrigerant (its id and 100-year GWP) and a full charge in kg. */
export function leakRuleHint(refrigerantId: string, gwp: number, fullChargeKg: number): LeakRuleHint {
  const lb = kgToLb(fullChargeKg);
  const tail = ' Whether it applies depends on the refrigerant, the charge size and the rules in force; the applicable regulations and a certified technician decide.';
  if (ODS_REFRIGERANTS.has(refrigerantId)) {
    const reaches = lb >= 50;
    return { regime: 'part-82-ods', chargeFromLb: 50, chargeReaches: reaches, text: `${refrigerantId} is ozone-depleting: 40 CFR 82.157 covers appliances with 50 lb or more (this one: ${lb.toFixed(1)} lb).${tail}` };
  }
  if (gwp > PART_84_GWP_ABOVE) {
    const reaches = lb >= 15;
    return { regime: 'part-84-hfc', chargeFromLb: 15, chargeReaches: reaches, text: `${refrigerantId} has a GWP above ${PART_84_GWP_ABOVE}: 40 CFR part 84 subpart C (AIM Act, from 2026) covers appliances with 15 lb or more (this one: ${lb.toFixed(1)} lb).${tail}` };
  }
  return { regime: 'none-known', chargeFromLb: null, chargeReaches: false, text: `Rimehold knows no federal leak-repair rate rule for ${refrigerantId} (GWP ${gwp}).${tail}` };
}
