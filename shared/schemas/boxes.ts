import { z } from 'zod';
import { BOX_KINDS, DEFROST_TYPES, SATURATION_METHODS, VALVE_TYPES, DEFAULT_VALVE_FULL_STEPS } from '../domain';
import { REFRIGERANT_IDS } from '../refrigerants';

/** Limits of box settings that are sent to a controller; the same numbers drive client forms. */
export const BOX_LIMITS = {
  setpointC: { min: -40, max: 15 },
  differentialK: { min: 0.3, max: 10 },
  limitC: { min: -50, max: 25 },
  alarmDelayMin: { min: 0, max: 240 },
  doorAlarmDelayMin: { min: 0, max: 60 },
  superheatTargetK: { min: 1, max: 20 },
  defrostIntervalH: { min: 1, max: 24 },
  defrostMaxMin: { min: 5, max: 120 },
  defrostTerminationC: { min: 0, max: 30 },
  dripMin: { min: 0, max: 20 },
  fanDelayMin: { min: 0, max: 20 },
} as const;

const L = BOX_LIMITS;
const num = (r: { min: number; max: number }, label: string) =>
  z.number({ error: `${label} must be a number` }).min(r.min, `${label}: at least ${r.min}`).max(r.max, `${label}: at most ${r.max}`);

/** Defrost settings of a box. Coolers normally use off-cycle defrost; freezers electric or hot gas. */
export const DefrostSettings = z.object({
  defrostType: z.enum(DEFROST_TYPES),
  defrostIntervalH: num(L.defrostIntervalH, 'Defrost interval (h)'),
  defrostMaxMin: num(L.defrostMaxMin, 'Defrost time limit (min)'),
  defrostTerminationC: num(L.defrostTerminationC, 'Defrost termination temperature'),
  dripMin: num(L.dripMin, 'Drip time (min)'),
  fanDelayMin: num(L.fanDelayMin, 'Fan delay (min)'),
});

const boxFields = z.object({
  siteId: z.number().int().positive(),
  name: z.string().trim().min(1, 'Enter a name').max(80),
  kind: z.enum(BOX_KINDS),
  setpointC: num(L.setpointC, 'Setpoint'),
  differentialK: num(L.differentialK, 'Differential'),
  highLimitC: num(L.limitC, 'High limit'),
  lowLimitC: num(L.limitC, 'Low limit'),
  alarmDelayMin: num(L.alarmDelayMin, 'Alarm delay (min)'),
  doorAlarmDelayMin: num(L.doorAlarmDelayMin, 'Door alarm delay (min)'),
  refrigerant: z.enum(REFRIGERANT_IDS),
  valveType: z.enum(VALVE_TYPES),
  saturationMethod: z.enum(SATURATION_METHODS),
  superheatTargetK: num(L.superheatTargetK, 'Superheat target'),
  ...DefrostSettings.shape,
});

const limitsOrdered = (b: { lowLimitC?: number; highLimitC?: number; setpointC?: number }) =>
  b.lowLimitC === undefined || b.highLimitC === undefined || b.setpointC === undefined
    ? true
    : b.lowLimitC < b.setpointC && b.setpointC < b.highLimitC;
const limitsMsg = { message: 'Low limit < setpoint < high limit is required', path: ['highLimitC'] };

export const BoxCreateBody = boxFields.refine(limitsOrdered, limitsMsg);
export type BoxCreateBody = z.infer<typeof BoxCreateBody>;

/** Editable descriptive fields and alarm limits; controller settings go through PUT /boxes/:id/settings. */
export const BoxUpdateBody = boxFields.partial().refine(limitsOrdered, limitsMsg);
export type BoxUpdateBody = z.infer<typeof BoxUpdateBody>;

/**
 * What a controller's suction transducer reads against (docs/device-protocol.md): the local
 * atmosphere (vented gauge), standard sea-level atmosphere 101.325 kPa (sealed gauge), or vacuum (absolute).
 */
export const GAUGE_REFERENCES = ['vented-gauge', 'sealed-gauge', 'absolute'] as const;
export type GaugeReference = (typeof GAUGE_REFERENCES)[number];

export interface ControllerSummary {
  id: number;
  serial: string;
  valveFullSteps: number;
  /** Reference of the suction (and liquid) transducer's readings. */
  gaugeReference?: GaugeReference;
  firmware: string | null;
  lastSeenAt: string | null;
  online: boolean;
  disabled: boolean;
}

export interface BoxDto extends BoxCreateBody {
  id: number;
  siteName: string;
  customerId: number;
  customerName: string;
  controller: ControllerSummary | null;
  /** End of the box's maintenance window (ISO), null when not in maintenance: its alarms are held. */
  maintenanceUntil: string | null;
  createdAt: string;
  updatedAt: string;
}

/** Admin provisions a controller for a box; the device secret is shown once in the answer. */
export const ControllerCreateBody = z.object({
  boxId: z.number().int().positive(),
  serial: z
    .string()
    .trim()
    .regex(/^[A-Za-z0-9][A-Za-z0-9_-]{2,39}$/, 'Serial: 3–40 letters, digits, - or _'),
  valveFullSteps: z.number().int().min(100).max(10_000).default(DEFAULT_VALVE_FULL_STEPS),
  firmware: z.string().trim().max(40).nullable().default(null),
  gaugeReference: z.enum(GAUGE_REFERENCES).default('vented-gauge'),
});
export type ControllerCreateBody = z.infer<typeof ControllerCreateBody>;

/** Admin changes a controller's declared transducer reference (PATCH /controllers/:id). */
export const ControllerUpdateBody = z.object({ gaugeReference: z.enum(GAUGE_REFERENCES) }).strict();
export type ControllerUpdateBody = z.infer<typeof ControllerUpdateBody>;
