/** Read side of the telemetry: latest readings, fleet status, and charts at a resolution chosen from the span. */
import { QueryTypes, type Sequelize } from 'sequelize';
import type { FleetBoxStatus, ReadingDto, ReadingFlag, ReadingPoint, ReadingsResponse, Resolution } from '../../shared/schemas/live';
import type { SessionUser } from '../../shared/schemas/auth';
import { sqlTs } from '../db/sequelize';
import { problems } from '../http/problem';
import { scopeSql } from '../auth/scope';

const HOUR = 3_600_000;

/**
 * The resolution for a span: up to 6 h raw, up to 2 days 1-minute buckets, up to 31 days
 * 15-minute buckets, beyond that hourly. A week's chart therefore reads 672 rollup rows, never raw;
 * every choice stays within MAX_READING_POINTS for spans up to the 400 days ReadingsQuery allows.
 */
export function resolutionFor(spanMs: number): Exclude<Resolution, 'auto'> {
  if (spanMs <= 6 * HOUR) return 'raw';
  if (spanMs <= 48 * HOUR) return '1m';
  if (spanMs <= 31 * 24 * HOUR) return '15m';
  return '1h';
}

/** Points per readings answer, at most (400 days of hourly buckets is 9,600). */
export const MAX_READING_POINTS = 10_000;
/** Longest span answered with raw readings (ms); beyond it ask for buckets. */
export const RAW_MAX_SPAN_MS = 24 * HOUR;

const TABLE = { '1m': 'readings_1m', '15m': 'readings_15m', '1h': 'readings_1h' } as const;
const BUCKET_MS = { '1m': 60_000, '15m': 900_000, '1h': HOUR } as const;
const FINEST_FIRST = ['raw', '1m', '15m', '1h'] as const;

/** True when a resolution answers the span within the caps (raw by RAW_MAX_SPAN_MS, buckets by MAX_READING_POINTS). */
function fits(resolution: Exclude<Resolution, 'auto'>, fromMs: number, toMs: number): boolean {
  if (resolution === 'raw') return toMs - fromMs <= RAW_MAX_SPAN_MS;
  const bucket = BUCKET_MS[resolution];
  return Math.ceil((toMs - Math.floor(fromMs / bucket) * bucket) / bucket) <= MAX_READING_POINTS;
}

/**
 * The resolution to answer with: `auto` picks by span; an explicit one that would exceed the caps
 * is refused with a 422 problem naming the finest resolution that fits.
 */
export function chooseResolution(requested: Resolution, from: Date, to: Date): Exclude<Resolution, 'auto'> {
  const fromMs = from.getTime();
  const toMs = to.getTime();
  const resolution = requested === 'auto' ? resolutionFor(toMs - fromMs) : requested;
  if (fits(resolution, fromMs, toMs)) return resolution;
  const finest = FINEST_FIRST.find((r) => fits(r, fromMs, toMs));
  const spanH = Math.round(((toMs - fromMs) / HOUR) * 10) / 10;
  const limit = resolution === 'raw' ? `raw readings cover at most ${RAW_MAX_SPAN_MS / HOUR} h` : `at most ${MAX_READING_POINTS} points per answer`;
  throw problems.unprocessable(
    'too-many-points',
    'Resolution too fine for this span',
    `${resolution} over ${spanH} h is too much (${limit}). ${finest ? `Ask for resolution=${finest} (or auto)` : 'Ask for a shorter span'}.`,
    { resolution: [finest ? `use ${finest} or coarser for this span` : 'shorten the span'] },
  );
}

const iso = (s: string) => `${s.replace(' ', 'T').slice(0, 23)}${s.length > 19 ? '' : '.000'}Z`;

/** Chart points of a box between from and to, at most MAX_READING_POINTS of them (422 problem beyond). */
export async function readingsBetween(sequelize: Sequelize, boxId: number, from: Date, to: Date, requested: Resolution): Promise<ReadingsResponse> {
  const resolution = chooseResolution(requested, from, to);
  let points: ReadingPoint[];
  if (resolution === 'raw') {
    const rows = await sequelize.query<Record<string, number | string | null>>(
      `SELECT DATE_FORMAT(ts, '%Y-%m-%d %H:%i:%s.%f') AS ts, box_air_c, superheat_k, valve_percent, suction_kpa_g, compressor_on, defrost_on, door_open, quality_flags
       FROM readings WHERE box_id = ? AND ts >= ? AND ts < ? ORDER BY ts LIMIT ?`,
      { replacements: [boxId, sqlTs(from.getTime()), sqlTs(to.getTime()), MAX_READING_POINTS + 1], type: QueryTypes.SELECT },
    );
    // A controller reporting faster than every ~9 s can exceed the cap within RAW_MAX_SPAN_MS.
    if (rows.length > MAX_READING_POINTS) {
      if (requested === 'auto') return readingsBetween(sequelize, boxId, from, to, '1m');
      throw problems.unprocessable('too-many-points', 'Resolution too fine for this span', `More than ${MAX_READING_POINTS} raw readings in this span. Ask for resolution=1m (or auto), or a shorter span.`, {
        resolution: ['use 1m or coarser for this span'],
      });
    }
    points = rows.map((r) => ({
      ts: iso(String(r.ts).slice(0, 23)),
      boxAirMinC: Number(r.box_air_c),
      boxAirAvgC: Number(r.box_air_c),
      boxAirMaxC: Number(r.box_air_c),
      superheatAvgK: r.superheat_k === null ? null : Number(r.superheat_k),
      valveAvgPercent: r.valve_percent === null ? null : Number(r.valve_percent),
      suctionAvgKPaG: Number(r.suction_kpa_g),
      compressorDuty: Number(r.compressor_on),
      defrostMin: 0,
      doorOpenMin: 0,
      samples: 1,
      ...(r.quality_flags ? { flags: JSON.parse(String(r.quality_flags)) as ReadingFlag[] } : {}),
    }));
  } else {
    const bucket = BUCKET_MS[resolution];
    const fromBucket = Math.floor(from.getTime() / bucket) * bucket;
    const rows = await sequelize.query<Record<string, number | string>>(
      `SELECT DATE_FORMAT(bucket_start, '%Y-%m-%d %H:%i:%s') AS bucket, samples, box_air_min_c, box_air_max_c, box_air_sum_c, superheat_sum_k, superheat_n,
              valve_sum_pct, valve_n, suction_sum_kpa_g, covered_ms, compressor_ms, defrost_ms, door_ms
       FROM ${TABLE[resolution]} WHERE box_id = ? AND bucket_start >= ? AND bucket_start < ? ORDER BY bucket_start`,
      { replacements: [boxId, sqlTs(fromBucket).slice(0, 19), sqlTs(to.getTime()).slice(0, 19)], type: QueryTypes.SELECT },
    );
    points = rows.map((r) => {
      const samples = Number(r.samples);
      const covered = Number(r.covered_ms);
      return {
        ts: iso(String(r.bucket)),
        boxAirMinC: Number(r.box_air_min_c),
        boxAirAvgC: Number(r.box_air_sum_c) / samples,
        boxAirMaxC: Number(r.box_air_max_c),
        superheatAvgK: Number(r.superheat_n) > 0 ? Number(r.superheat_sum_k) / Number(r.superheat_n) : null,
        valveAvgPercent: Number(r.valve_n) > 0 ? Number(r.valve_sum_pct) / Number(r.valve_n) : null,
        suctionAvgKPaG: Number(r.suction_sum_kpa_g) / samples,
        compressorDuty: covered > 0 ? Number(r.compressor_ms) / covered : 0,
        defrostMin: Number(r.defrost_ms) / 60_000,
        doorOpenMin: Number(r.door_ms) / 60_000,
        samples,
      };
    });
  }
  return { boxId, resolution, from: from.toISOString(), to: to.toISOString(), points };
}

/** The latest stored reading of a box, or null. */
export async function latestReading(sequelize: Sequelize, boxId: number): Promise<ReadingDto | null> {
  const rows = await sequelize.query<{ reading: string }>('SELECT reading FROM box_latest WHERE box_id = ?', { replacements: [boxId], type: QueryTypes.SELECT });
  return rows[0] ? (JSON.parse(rows[0].reading) as ReadingDto) : null;
}

/**
 * The one statement behind GET /fleet/status and its replacements: every join is on a primary or
 * unique key (box_latest and box_maintenance by box_id, controllers by uq_controllers_box), so the
 * answer costs one pass over the user's boxes, whatever their number; no per-box query.
 */
export function fleetStatusSql(user: SessionUser): { sql: string; replacements: number[] } {
  const scope = scopeSql(user, 'b.customer_id');
  return {
    sql: `SELECT b.id AS box_id, b.name AS box_name, b.kind, b.valve_type, b.refrigerant, b.setpoint_c, b.high_limit_c, b.low_limit_c, b.superheat_target_k,
            s.id AS site_id, s.name AS site_name, s.time_zone AS site_time_zone, c.id AS customer_id, c.name AS customer_name,
            ctl.serial, ctl.online, DATE_FORMAT(ctl.last_seen_at, '%Y-%m-%d %H:%i:%s.%f') AS last_seen, l.reading,
            DATE_FORMAT(m.until_at, '%Y-%m-%d %H:%i:%s.%f') AS maintenance_until
     FROM boxes b JOIN sites s ON s.id = b.site_id JOIN customers c ON c.id = b.customer_id
     LEFT JOIN controllers ctl ON ctl.box_id = b.id LEFT JOIN box_latest l ON l.box_id = b.id
     LEFT JOIN box_maintenance m ON m.box_id = b.id AND m.until_at > UTC_TIMESTAMP(3)
     WHERE ${scope.sql}`,
    replacements: scope.replacements,
  };
}

type FleetRow = Record<string, string | number | null>;

/** One row of the fleet statement as a status without its latest reading. */
function statusOf(r: FleetRow): Omit<FleetBoxStatus, 'latest'> {
  return {
    boxId: Number(r.box_id),
    boxName: String(r.box_name),
    kind: r.kind as FleetBoxStatus['kind'],
    valveType: r.valve_type as FleetBoxStatus['valveType'],
    refrigerant: String(r.refrigerant),
    setpointC: Number(r.setpoint_c),
    highLimitC: Number(r.high_limit_c),
    lowLimitC: Number(r.low_limit_c),
    superheatTargetK: Number(r.superheat_target_k),
    siteId: Number(r.site_id),
    siteName: String(r.site_name),
    siteTimeZone: String(r.site_time_zone),
    customerId: Number(r.customer_id),
    customerName: String(r.customer_name),
    controllerSerial: r.serial === null ? null : String(r.serial),
    online: Number(r.online) === 1,
    lastSeenAt: r.last_seen ? iso(String(r.last_seen).slice(0, 23)) : null,
    maintenanceUntil: r.maintenance_until ? iso(String(r.maintenance_until).slice(0, 23)) : null,
  };
}

async function fleetRows(sequelize: Sequelize, user: SessionUser): Promise<FleetRow[]> {
  const q = fleetStatusSql(user);
  return sequelize.query<FleetRow>(q.sql, { replacements: q.replacements, type: QueryTypes.SELECT });
}

/** Latest state of every box the user may see (the client sorts; the order here is by box id). */
export async function fleetStatus(sequelize: Sequelize, user: SessionUser): Promise<FleetBoxStatus[]> {
  return (await fleetRows(sequelize, user)).map((r) => ({ ...statusOf(r), latest: r.reading ? (JSON.parse(String(r.reading)) as ReadingDto) : null }));
}

/**
 * The same answer as fleetStatus, as the JSON text of `FleetBoxStatus[]`: each box's latest reading
 * is spliced in as stored (box_latest.reading is the JSON the writer made of a ReadingDto), so
 * 2,000 readings are not parsed and serialised again on every call.
 */
export async function fleetStatusJson(sequelize: Sequelize, user: SessionUser): Promise<string> {
  const parts = (await fleetRows(sequelize, user)).map((r) => `${JSON.stringify(statusOf(r)).slice(0, -1)},"latest":${r.reading ? String(r.reading) : 'null'}}`);
  return `[${parts.join(',')}]`;
}
