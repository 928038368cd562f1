/** Demo-mode fault injection: the faults the simulator models and the request that injects one. */
import { z } from 'zod';

/** Faults the simulator can inject, each with the trend signature a technician reads (simulator/README.md). */
export const FAULT_NAMES = [
  'low-charge',
  'iced-coil',
  'evap-fan-failed',
  'defrost-heater-failed',
  'door-ajar',
  'thermistor-open',
  'thermistor-shorted',
  'sensor-stuck',
  'sensor-drift',
  'valve-leak-through',
  'valve-leak-through-severe',
  'short-cycling',
  'offline',
] as const;
export type FaultName = (typeof FAULT_NAMES)[number];

/** Thermistor inputs a sensor fault can hit (telemetry field names). */
export const THERMISTOR_NAMES = ['boxAirC', 'suctionLineC', 'coilInletC', 'dischargeAirC', 'liquidLineC'] as const;
export type ThermistorName = (typeof THERMISTOR_NAMES)[number];

/** POST /api/v1/demo/faults (admin, demo mode only). */
export const DemoFaultBody = z
  .object({ boxId: z.number().int().positive(), fault: z.enum(FAULT_NAMES), on: z.boolean(), sensor: z.enum(THERMISTOR_NAMES).optional() })
  .strict();
export type DemoFaultBody = z.infer<typeof DemoFaultBody>;
