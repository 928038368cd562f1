import { z } from 'zod';
import { APPLIANCE_TYPES, LEAK_RATE_EXEMPTIONS, MASS_UNITS, type ApplianceType, type LeakRateEvent, type LeakRateExemption, type LeakRuleHint, type MassUnit } from '../records/leakRate';
import { CalendarDate } from './visits';

const amount = (label: string) => z.number({ error: `${label} must be a number` }).positive(`${label}: more than 0`).max(100_000, `${label}: at most 100000`);

/** The system's full charge and appliance type (PUT /refrigerant-log/boxes/:id/system). */
export const RefrigerantSystemBody = z
  .object({
    fullCharge: amount('Full charge'),
    unit: z.enum(MASS_UNITS),
    applianceType: z.enum(APPLIANCE_TYPES),
    /** When the system last held its full charge (installation or full recharge), or null. */
    fullChargeDate: CalendarDate.nullable().default(null),
  })
  .strict();
export type RefrigerantSystemBody = z.infer<typeof RefrigerantSystemBody>;

/** One addition or recovery (POST /refrigerant-log/boxes/:id/entries); entries are never edited. */
export const RefrigerantEntryBody = z
  .object({
    kind: z.enum(['addition', 'recovery']),
    amount: amount('Amount'),
    unit: z.enum(MASS_UNITS),
    date: CalendarDate,
    /** The technician who did it (default: the signed-in user). */
    technicianId: z.number().int().positive().optional(),
    cylinderId: z.string().trim().min(1, 'Cylinder: enter its id').max(40),
    reason: z.string().trim().min(1, 'Reason: say why').max(300),
    exemption: z.enum(LEAK_RATE_EXEMPTIONS).nullable().default(null),
    sameLeakAsPrevious: z.boolean().default(false),
  })
  .strict()
  .refine((b) => b.kind === 'addition' || (b.exemption === null && !b.sameLeakAsPrevious), { message: 'Only an addition can be exempt or part of the same leak', path: ['exemption'] });
export type RefrigerantEntryBody = z.infer<typeof RefrigerantEntryBody>;

export interface RefrigerantEntryDto {
  id: number;
  kind: 'addition' | 'recovery';
  amountKg: number;
  /** As entered. */
  enteredAmount: number;
  enteredUnit: MassUnit;
  date: string;
  refrigerant: string;
  technicianId: number;
  technicianName: string;
  cylinderId: string;
  reason: string;
  exemption: LeakRateExemption | null;
  sameLeakAsPrevious: boolean;
  createdAt: string;
}

export interface RefrigerantLogDto {
  boxId: number;
  boxName: string;
  siteName: string;
  customerId: number;
  refrigerant: string;
  gwp: number | null;
  gwpSource: string | null;
  system: { fullChargeKg: number; applianceType: ApplianceType; fullChargeDate: string | null; updatedAt: string } | null;
  threshold: { percent: number; label: string; source: string } | null;
  method: string;
  repairDeadlineDays: number;
  repairDeadlineSource: string;
  entries: RefrigerantEntryDto[];
  /** Leak rate at every rated addition, oldest first. */
  events: LeakRateEvent[];
  /** The newest rated addition, or null. */
  latest: LeakRateEvent | null;
  ruleHint: LeakRuleHint | null;
  totals: { addedKg: number; recoveredKg: number };
}
