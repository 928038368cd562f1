/**
 * The ingest's database writer: one transaction per batch stores the new raw readings (a
 * re-delivered one is recognised by its (box, ts) key, ts to the millisecond, and skipped), adds
 * only the rows that were actually inserted to the 1 min, 15 min and 1 h rollups and moves each
 * box's latest reading forward. A batch written again (a retry after a commit whose answer was
 * lost) therefore inserts nothing and adds nothing. It talks to MariaDB through
 * the mariadb driver's batch() (the ORM would cost ~3x here), with timestamps as UTC strings.
 */
import mariadb from 'mariadb';
import type { Config } from '../config';
import { sqlTs } from '../db/sequelize';
import type { ConvertedReading } from './convert';

/** A state is held until the next reading, but never credited for more than this (a gap is not data). */
export const MAX_HOLD_MS = 60_000;

export const ROLLUPS = [
  { table: 'readings_1m', bucketMs: 60_000 },
  { table: 'readings_15m', bucketMs: 15 * 60_000 },
  { table: 'readings_1h', bucketMs: 3_600_000 },
] as const;

interface PrevState {
  tsMs: number;
  compressorOn: boolean;
  defrostOn: boolean;
  doorOpen: boolean;
}

interface Agg {
  boxId: number;
  bucketMs: number;
  samples: number;
  airMin: number;
  airMax: number;
  airSum: number;
  shSum: number;
  shN: number;
  valveSum: number;
  valveN: number;
  suctionSum: number;
  coveredMs: number;
  compMs: number;
  defrostMs: number;
  doorMs: number;
}


const RAW_SQL =
  'INSERT IGNORE INTO readings (box_id, ts, seq, received_at, refrigerant, box_air_c, suction_kpa_g, suction_line_c, saturated_suction_c, superheat_k, coil_inlet_c, discharge_air_c, liquid_kpa_g, liquid_line_c, subcooling_k, valve_steps, valve_percent, compressor_on, fan_on, defrost_on, door_open, quality_flags, glide_k, condenser_air_c) VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)';

const rollupSql = (table: string) =>
  `INSERT INTO ${table} (box_id, bucket_start, samples, box_air_min_c, box_air_max_c, box_air_sum_c, superheat_sum_k, superheat_n, valve_sum_pct, valve_n, suction_sum_kpa_g, covered_ms, compressor_ms, defrost_ms, door_ms) VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?) ON DUPLICATE KEY UPDATE samples = samples + VALUES(samples), box_air_min_c = LEAST(box_air_min_c, VALUES(box_air_min_c)), box_air_max_c = GREATEST(box_air_max_c, VALUES(box_air_max_c)), box_air_sum_c = box_air_sum_c + VALUES(box_air_sum_c), superheat_sum_k = superheat_sum_k + VALUES(superheat_sum_k), superheat_n = superheat_n + VALUES(superheat_n), valve_sum_pct = valve_sum_pct + VALUES(valve_sum_pct), valve_n = valve_n + VALUES(valve_n), suction_sum_kpa_g = suction_sum_kpa_g + VALUES(suction_sum_kpa_g), covered_ms = covered_ms + VALUES(covered_ms), compressor_ms = compressor_ms + VALUES(compressor_ms), defrost_ms = defrost_ms + VALUES(defrost_ms), door_ms = door_ms + VALUES(door_ms)`;

const LATEST_SQL =
  'INSERT INTO box_latest (box_id, ts, reading) VALUES (?,?,?) ON DUPLICATE KEY UPDATE reading = IF(VALUES(ts) >= ts, VALUES(reading), reading), ts = GREATEST(ts, VALUES(ts))';

/** Doubles are sent as strings so the driver keeps one parameter type per column (STACK-NOTES §7). */
const d = (x: number | null): string | null => (x === null ? null : String(x));
const b = (x: boolean): number => (x ? 1 : 0);
/** The (box, instant) key of a reading, the instant as stored (UTC, milliseconds). */
const keyOf = (boxId: number, tsMs: number): string => `${boxId}|${sqlTs(tsMs)}`;

function rawRow(r: ConvertedReading, received: string): Array<string | number | null> {
  return [
    r.boxId, sqlTs(Date.parse(r.ts)), r.seq, received, r.refrigerant, d(r.boxAirC), d(r.suctionKPaG), d(r.suctionLineC), d(r.saturatedSuctionC), d(r.superheatK),
    d(r.coilInletC), d(r.dischargeAirC), d(r.liquidKPaG), d(r.liquidLineC), d(r.subcoolingK), r.valveSteps, d(r.valvePercent), b(r.compressorOn), b(r.fanOn), b(r.defrostOn), b(r.doorOpen),
    r.flags.length ? JSON.stringify(r.flags) : null, d(r.glideK), d(r.condenserAirC ?? null),
  ];
}

/** Keys of the given readings already present in `readings`; `lock` takes shared next-key locks so no other writer can insert them before this transaction ends. */
async function presentKeys(conn: mariadb.PoolConnection, rs: ConvertedReading[], lock: boolean): Promise<Set<string>> {
  if (rs.length === 0) return new Set();
  const placeholders = rs.map(() => '(?,?)').join(',');
  const keyParams = rs.flatMap((r) => [r.boxId, sqlTs(Date.parse(r.ts))]);
  const rows: Array<{ box_id: number; ts: string }> = await conn.query(`SELECT box_id, ts FROM readings WHERE (box_id, ts) IN (${placeholders})${lock ? ' LOCK IN SHARE MODE' : ''}`, keyParams);
  return new Set(rows.map((e) => `${e.box_id}|${e.ts.slice(0, 23)}`));
}

const prevOf = (x: ConvertedReading): PrevState => ({ tsMs: Date.parse(x.ts), compressorOn: x.compressorOn, defrostOn: x.defrostOn, doorOpen: x.doorOpen });

/** Rows an INSERT reported as inserted (a duplicate under INSERT IGNORE counts 0). */
const affected = (res: unknown): number => Number((res as { affectedRows?: number } | null)?.affectedRows ?? 0);

export interface FlushResult {
  /** Readings that were new and are now stored. */
  stored: ConvertedReading[];
  duplicates: number;
}

/** True for deadlocks and lock-wait timeouts, which succeed when retried. */
export function isTransientError(e: unknown): boolean {
  // Sequelize wraps the driver's error in `parent`.
  const err = e as { errno?: number; parent?: { errno?: number } } | null;
  const errno = err?.errno ?? err?.parent?.errno;
  return errno === 1213 || errno === 1205;
}

export class ReadingWriter {
  private pool: mariadb.Pool;
  private prev = new Map<number, PrevState>();
  private prevLoaded = false;

  constructor(config: Config, connections = 2) {
    this.pool = mariadb.createPool({
      host: config.DB_HOST,
      port: config.DB_PORT,
      user: config.DB_USER,
      password: config.DB_PASSWORD,
      database: config.DB_NAME,
      connectionLimit: connections,
      acquireTimeout: 5000,
      connectTimeout: 3000,
      dateStrings: true,
      timezone: 'Z',
      initSql: "SET time_zone = '+00:00'",
    });
    // The pool reports a failed background refill as an 'error' event; without a listener that
    // event would crash the process during a database outage. Failing queries are what the
    // ingest acts on, so the event itself only needs to be heard.
    (this.pool as unknown as NodeJS.EventEmitter).on('error', () => undefined);
  }

  /** True when a trivial query succeeds. */
  async ping(): Promise<boolean> {
    try {
      await this.pool.query('SELECT 1');
      return true;
    } catch {
      return false;
    }
  }

  private async loadPrev(conn: mariadb.PoolConnection): Promise<void> {
    if (this.prevLoaded) return;
    this.prev = new Map();
    const rows: Array<{ box_id: number; reading: string }> = await conn.query('SELECT box_id, reading FROM box_latest');
    for (const r of rows) {
      this.prev.set(r.box_id, prevOf(JSON.parse(r.reading) as ConvertedReading));
    }
    this.prevLoaded = true;
  }

  /** Re-reads the latest stored reading of the given boxes (a locking read: the newest committed one). */
  private async refreshPrev(conn: mariadb.PoolConnection, boxIds: number[]): Promise<void> {
    if (boxIds.length === 0) return;
    const rows: Array<{ box_id: number; reading: string }> = await conn.query(`SELECT box_id, reading FROM box_latest WHERE box_id IN (${boxIds.map(() => '?').join(',')}) LOCK IN SHARE MODE`, boxIds);
    for (const r of rows) this.prev.set(r.box_id, prevOf(JSON.parse(r.reading) as ConvertedReading));
  }

  /** Stores a batch in one transaction; throws on failure (nothing of the batch is then committed). */
  async flush(batch: ConvertedReading[], receivedAtMs = Date.now()): Promise<FlushResult> {
    if (batch.length === 0) return { stored: [], duplicates: 0 };
    const conn = await this.pool.getConnection();
    try {
      await this.loadPrev(conn);
      // Unique within the batch first (the broker may deliver a message twice in one window), keyed
      // on the instant rather than its spelling: `…00.5Z` and `…00.500Z` are one reading.
      const seen = new Set<string>();
      const unique: ConvertedReading[] = [];
      for (const r of batch) {
        const k = keyOf(r.boxId, Date.parse(r.ts));
        if (!seen.has(k)) {
          seen.add(k);
          unique.push(r);
        }
      }
      await conn.beginTransaction();
      // Readings of a box arrive in time order, so one newer than the box's latest stored reading is
      // almost certainly new. Only the others (re-deliveries after a crash or reconnect) are looked up.
      const doubtful = unique.filter((r) => {
        const p = this.prev.get(r.boxId);
        return p !== undefined && Date.parse(r.ts) <= p.tsMs;
      });
      const existingKeys = await presentKeys(conn, doubtful, false);
      let fresh = unique.filter((r) => !existingKeys.has(keyOf(r.boxId, Date.parse(r.ts))));
      fresh.sort((a, c) => a.boxId - c.boxId || Date.parse(a.ts) - Date.parse(c.ts));
      if (fresh.length > 0) {
        const received = sqlTs(receivedAtMs);
        await conn.query('SAVEPOINT raw_rows');
        const inserted = affected(await conn.batch(RAW_SQL, fresh.map((r) => rawRow(r, received))));
        if (inserted !== fresh.length) {
          // Some readings taken for new were stored already (another writer, or a batch whose commit
          // went through although its answer was lost). The rollups must count only rows this
          // transaction inserts, so undo the raw insert and do it again against a locked look-up.
          await conn.query('ROLLBACK TO SAVEPOINT raw_rows');
          const stored = await presentKeys(conn, fresh, true);
          const candidates = fresh.filter((r) => !stored.has(keyOf(r.boxId, Date.parse(r.ts))));
          const again = candidates.length > 0 ? affected(await conn.batch(RAW_SQL, candidates.map((r) => rawRow(r, received)))) : 0;
          if (again === candidates.length) fresh = candidates;
          else {
            // INSERT IGNORE skipped a row for another reason: what exists now of the candidates
            // (their keys were locked as absent) is exactly what this transaction inserted.
            const mine = await presentKeys(conn, candidates, false);
            fresh = candidates.filter((r) => mine.has(keyOf(r.boxId, Date.parse(r.ts))));
          }
          // This writer's view of those boxes was behind: take their latest reading as stored, so
          // the time-in-state of the new readings starts where the stored ones end.
          await this.refreshPrev(conn, [...new Set(fresh.map((r) => r.boxId))]);
        }
      }
      if (fresh.length > 0) {
        const nextPrev = new Map(this.prev);
        const aggs = ROLLUPS.map(() => new Map<string, Agg>());
        for (const r of fresh) {
          const tsMs = Date.parse(r.ts);
          const p = nextPrev.get(r.boxId);
          const dt = p && tsMs > p.tsMs ? Math.min(tsMs - p.tsMs, MAX_HOLD_MS) : 0;
          ROLLUPS.forEach((roll, i) => {
            const bucketMs = Math.floor(tsMs / roll.bucketMs) * roll.bucketMs;
            const key = `${r.boxId}|${bucketMs}`;
            const map = aggs[i];
            if (!map) return;
            let a = map.get(key);
            if (!a) {
              a = { boxId: r.boxId, bucketMs, samples: 0, airMin: r.boxAirC, airMax: r.boxAirC, airSum: 0, shSum: 0, shN: 0, valveSum: 0, valveN: 0, suctionSum: 0, coveredMs: 0, compMs: 0, defrostMs: 0, doorMs: 0 };
              map.set(key, a);
            }
            a.samples++;
            a.airMin = Math.min(a.airMin, r.boxAirC);
            a.airMax = Math.max(a.airMax, r.boxAirC);
            a.airSum += r.boxAirC;
            if (r.superheatK !== null) {
              a.shSum += r.superheatK;
              a.shN++;
            }
            if (r.valvePercent !== null) {
              a.valveSum += r.valvePercent;
              a.valveN++;
            }
            a.suctionSum += r.suctionKPaG;
            if (p && dt > 0) {
              a.coveredMs += dt;
              if (p.compressorOn) a.compMs += dt;
              if (p.defrostOn) a.defrostMs += dt;
              if (p.doorOpen) a.doorMs += dt;
            }
          });
          if (!p || tsMs > p.tsMs) nextPrev.set(r.boxId, { tsMs, compressorOn: r.compressorOn, defrostOn: r.defrostOn, doorOpen: r.doorOpen });
        }
        for (let i = 0; i < ROLLUPS.length; i++) {
          const roll = ROLLUPS[i];
          const map = aggs[i];
          if (!roll || !map) continue;
          await conn.batch(
            rollupSql(roll.table),
            [...map.values()].map((a) => [
              a.boxId, sqlTs(a.bucketMs).slice(0, 19), a.samples, d(a.airMin), d(a.airMax), d(a.airSum), d(a.shSum), a.shN, d(a.valveSum), a.valveN, d(a.suctionSum), a.coveredMs, a.compMs, a.defrostMs, a.doorMs,
            ]),
          );
        }
        const newest = new Map<number, ConvertedReading>();
        for (const r of fresh) {
          const cur = newest.get(r.boxId);
          if (!cur || Date.parse(r.ts) > Date.parse(cur.ts)) newest.set(r.boxId, r);
        }
        await conn.batch(
          LATEST_SQL,
          [...newest.values()].map((r) => [r.boxId, sqlTs(Date.parse(r.ts)), JSON.stringify(toDto(r))]),
        );
        await conn.commit();
        this.prev = nextPrev;
      } else {
        await conn.commit();
      }
      return { stored: fresh, duplicates: batch.length - fresh.length };
    } catch (e) {
      await conn.rollback().catch(() => undefined);
      // A failed commit may still have been applied (its answer lost): take each box's latest
      // reading from the database again rather than trusting the in-memory copy.
      this.prevLoaded = false;
      throw e;
    } finally {
      await conn.release().catch(() => undefined);
    }
  }

  /** Records when controllers were last heard from; a controller whose readings arrive is online. */
  async touchControllers(lastSeen: Map<number, number>): Promise<void> {
    if (lastSeen.size === 0) return;
    await this.pool.batch(
      'UPDATE controllers SET last_seen_at = GREATEST(COALESCE(last_seen_at, ?), ?), online = 1 WHERE id = ?',
      [...lastSeen.entries()].map(([id, ms]) => [sqlTs(ms), sqlTs(ms), id]),
    );
  }

  async close(): Promise<void> {
    await this.pool.end().catch(() => undefined);
  }
}

/** The API/WebSocket form of a stored reading. */
export function toDto(r: ConvertedReading): import('../../shared/schemas/live').ReadingDto {
  const { boxId: _b, refrigerant: _r, conversionNote: _n, ...dto } = r;
  return dto;
}

/** What the ingest writes through: one ReadingWriter, or several commit streams (CommitStreams). */
export interface BatchWriter {
  flush(batch: ConvertedReading[], receivedAtMs?: number): Promise<FlushResult>;
  ping(): Promise<boolean>;
  touchControllers(lastSeen: Map<number, number>): Promise<void>;
  close(): Promise<void>;
}

/**
 * Several commit streams (INGEST_COMMIT_STREAMS): a batch is split by box over N writers, each with
 * its own connections and its own view of its boxes' latest state, and the parts commit at the same
 * time, so one transaction's log flush no longer waits for the other's. A box always goes to the
 * same stream, so its readings keep their order and its time-in-state is counted by one writer.
 * The batch succeeds only when every part has committed; after a failure the ingest writes the
 * whole batch again, and the parts already committed are recognised as stored (nothing is counted
 * twice, the same path as a retry after a lost commit answer).
 */
export class CommitStreams implements BatchWriter {
  private readonly streams: ReadingWriter[];
  /**
   * Readings a part committed in a batch whose other part failed. The ingest writes that batch
   * again; those readings then come back as duplicates, but they were stored for the first time by
   * this ingest and are still to be announced (alarms, live screens): they are answered as stored.
   */
  private readonly committedEarlier = new Map<string, ConvertedReading>();

  constructor(config: Config, count: number) {
    this.streams = Array.from({ length: Math.max(1, count) }, () => new ReadingWriter(config));
  }

  /** The stream a box's readings go to. */
  streamOf(boxId: number): number {
    return boxId % this.streams.length;
  }

  async flush(batch: ConvertedReading[], receivedAtMs = Date.now()): Promise<FlushResult> {
    if (this.streams.length === 1) return (this.streams[0] as ReadingWriter).flush(batch, receivedAtMs);
    const parts: ConvertedReading[][] = this.streams.map(() => []);
    for (const r of batch) parts[this.streamOf(r.boxId)]?.push(r);
    // Every part runs to its end before the batch answers, so a retry never overlaps a part still committing.
    const settled = await Promise.allSettled(parts.map((p, i) => (p.length ? (this.streams[i] as ReadingWriter).flush(p, receivedAtMs) : Promise.resolve({ stored: [], duplicates: 0 }))));
    const failed = settled.find((s): s is PromiseRejectedResult => s.status === 'rejected');
    if (failed) {
      if (this.committedEarlier.size > 100_000) this.committedEarlier.clear(); // a bound, not a case: a batch is at most a few thousand
      for (const s of settled) if (s.status === 'fulfilled') for (const r of s.value.stored) this.committedEarlier.set(keyOf(r.boxId, Date.parse(r.ts)), r);
      throw failed.reason;
    }
    const done = settled as Array<PromiseFulfilledResult<FlushResult>>;
    const stored = done.flatMap((s) => s.value.stored);
    let duplicates = done.reduce((n, s) => n + s.value.duplicates, 0);
    if (this.committedEarlier.size > 0) {
      const now = new Set(stored.map((r) => keyOf(r.boxId, Date.parse(r.ts))));
      for (const r of batch) {
        const k = keyOf(r.boxId, Date.parse(r.ts));
        if (!now.has(k) && this.committedEarlier.delete(k)) {
          stored.push(r);
          now.add(k);
          duplicates--;
        }
      }
    }
    return { stored, duplicates };
  }

  async ping(): Promise<boolean> {
    const up = await Promise.all(this.streams.map((w) => w.ping()));
    return up.every(Boolean);
  }

  touchControllers(lastSeen: Map<number, number>): Promise<void> {
    return (this.streams[0] as ReadingWriter).touchControllers(lastSeen);
  }

  async close(): Promise<void> {
    await Promise.all(this.streams.map((w) => w.close()));
  }
}
