/** Shapes of the live data: fleet status, readings and WebSocket events. */
import { z } from 'zod';
import type { BoxKind, ValveType } from '../domain';
import type { SettingsChangeDto } from './settings';
import type { AlarmDto } from './alarms';

/** Why a reading's value is missing or doubtful (server/telemetry/quality.ts, convert.ts). */
export const READING_FLAG_CODES = ['sensor-open', 'sensor-shorted', 'sensor-out-of-range', 'sensor-stuck', 'conversion', 'glide', 'negative-subcooling', 'supercritical'] as const;
export type ReadingFlagCode = (typeof READING_FLAG_CODES)[number];
/** Values of a reading a flag can stand in for (where the screen shows it). */
export const READING_FLAG_TARGETS = ['boxAirC', 'suctionKPaG', 'suctionLineC', 'saturatedSuctionC', 'superheatK', 'coilInletC', 'dischargeAirC', 'liquidKPaG', 'liquidLineC', 'subcoolingK', 'valvePercent', 'condenserAirC', 'approachK'] as const;
export type ReadingFlagTarget = (typeof READING_FLAG_TARGETS)[number];

/** One stated reason with a reading: the sensor (telemetry field) it concerns and the values it blanks or qualifies. */
export interface ReadingFlag {
  code: ReadingFlagCode;
  /** Telemetry field of the sensor concerned, when a sensor is. */
  sensor?: ReadingFlagTarget;
  /** Values this flag stands in for (blank) or qualifies (glide, negative subcooling). */
  affects: ReadingFlagTarget[];
  /** Plain-words reason, e.g. "Suction-line sensor open (reads −60.0 °C): no superheat". */
  message: string;
}

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
  /** Stated reasons for missing or doubtful values (absent on readings stored before they were kept). */
  flags?: ReadingFlag[];
  /** Glide at the coil-inlet reading, K, on the two-thermistor method (null otherwise). */
  glideK?: number | null;
  /** Air entering the condenser or gas cooler, °C, when the controller reports it. */
  condenserAirC?: number | null;
  /** A supercritical high side: gas-cooler outlet minus the air entering the gas cooler, K (null otherwise). */
  approachK?: number | null;
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
  /** The site's IANA time zone (e.g. 'Europe/Berlin'); times on the fleet page are shown in it. */
  siteTimeZone?: string;
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
  /** Raw resolution only: the reading's stated reasons (a gap in superheat shows why). */
  flags?: ReadingFlag[];
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
