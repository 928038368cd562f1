/** Shapes of the live data: fleet status, readings and WebSocket events. */
import { z } from 'zod';
import type { BoxKind, ValveType } from '../domain';
import type { SettingsChangeDto } from './settings';
import type { AlarmDto } from './alarms';

/** One converted reading as the API and the WebSocket present it. Temperatures °C, pressures kPa(g), differences K. */
export interface ReadingDto {
  ts: string;
  seq: number;
  boxAirC: number;
  suctionKPaG: number;
  suctionLineC: number;
  /** Dew-point saturation temperature at the suction pressure (or the coil-inlet thermistor). */
  saturatedSuctionC: number | null;
  superheatK: number | null;
  coilInletC: number | null;
  dischargeAirC: number | null;
  liquidKPaG: number | null;
  liquidLineC: number | null;
  subcoolingK: number | null;
  valveSteps: number | null;
  valvePercent: number | null;
  compressorOn: boolean;
  fanOn: boolean;
  defrostOn: boolean;
  doorOpen: boolean;
}

export interface FleetBoxStatus {
  boxId: number;
  boxName: string;
  kind: BoxKind;
  valveType: ValveType;
  refrigerant: string;
  setpointC: number;
  highLimitC: number;
  lowLimitC: number;
  superheatTargetK: number;
  siteId: number;
  siteName: string;
  customerId: number;
  customerName: string;
  controllerSerial: string | null;
  online: boolean;
  lastSeenAt: string | null;
  latest: ReadingDto | null;
  /** End of the box's maintenance window (ISO), null when not in maintenance: its alarms are held. */
  maintenanceUntil: string | null;
}

export const RESOLUTIONS = ['auto', 'raw', '1m', '15m', '1h'] as const;
export type Resolution = (typeof RESOLUTIONS)[number];

export const ReadingsQuery = z
  .object({
    from: z.iso.datetime({ offset: true }),
    to: z.iso.datetime({ offset: true }),
    resolution: z.enum(RESOLUTIONS).default('auto'),
  })
  .refine((q) => Date.parse(q.from) < Date.parse(q.to), { message: '`from` must be before `to`', path: ['from'] })
  .refine((q) => Date.parse(q.to) - Date.parse(q.from) <= 400 * 86_400_000, { message: 'At most 400 days per query', path: ['to'] });
export type ReadingsQuery = z.infer<typeof ReadingsQuery>;

/** A bucket of a rollup (or one raw reading when resolution is raw: min = avg = max). */
export interface ReadingPoint {
  ts: string;
  boxAirMinC: number;
  boxAirAvgC: number;
  boxAirMaxC: number;
  superheatAvgK: number | null;
  valveAvgPercent: number | null;
  suctionAvgKPaG: number;
  /** Fraction 0–1 of the bucket with the compressor running. */
  compressorDuty: number;
  defrostMin: number;
  doorOpenMin: number;
  samples: number;
}

export interface ReadingsResponse {
  boxId: number;
  resolution: Exclude<Resolution, 'auto'>;
  from: string;
  to: string;
  points: ReadingPoint[];
}

/** Server → browser frames on /ws. */
export type LiveEvent =
  | { type: 'hello'; userId: number; serverTime: string }
  | { type: 'reading'; boxId: number; reading: ReadingDto }
  | { type: 'controller'; boxId: number; serial: string; online: boolean; at: string }
  | { type: 'settings'; boxId: number; change: SettingsChangeDto }
  | { type: 'alarm'; alarm: AlarmDto }
  | { type: 'maintenance'; boxId: number; until: string | null }
  | { type: 'ping'; at: string };

/** Frames the browser may send: only a pong or a resync request; anything else is dropped. */
export const ClientFrame = z.discriminatedUnion('type', [z.object({ type: z.literal('pong') }), z.object({ type: z.literal('resync') })]);
