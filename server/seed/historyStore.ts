/**
 * Writes one box's generated history in one transaction on a raw mariadb connection: the raw
 * readings through the driver's bulk batch() with type-stable parameters (STACK-NOTES §7:
 * timestamps as UTC strings, doubles as strings), each chunk inserted while the next is computed;
 * then the rollups, the latest reading, the past alarms with their transitions, and the rule
 * engine's snapshot. A box is seeded whole or not at all, so an interrupted first start simply
 * seeds the remaining boxes at the next one.
 */
import mariadb from 'mariadb';
import { setImmediate as yieldToLoop } from 'node:timers/promises';
import type { Config } from '../config';
import { sqlTs } from '../db/sequelize';
import { toDto } from '../telemetry/writer';
import { replayAlarms } from './historyAlarms';
import { RAW_COLUMNS, ROLLUP_COLUMNS, generateBoxHistory } from './historyBox';
import type { HistoryJob } from './historyPlan';

/** The database settings a seeding connection needs. */
export type HistoryDb = Pick<Config, 'DB_HOST' | 'DB_PORT' | 'DB_USER' | 'DB_PASSWORD' | 'DB_NAME'>;

/** What was stored for one box. */
export interface BoxSeedResult {
  boxId: number;
  readings: number;
  rollupRows: number;
  alarms: number;
  defrostStartsMs: number[];
  /** Readings the model produced outside the telemetry bounds (not stored, as a controller would not send them). */
  dropped: number;
  /** Time spent generating (model, conversion, rollups, rules) and waiting for the database, ms. */
  generateMs: number;
  waitMs: number;
}

const RAW_SQL = `INSERT INTO readings (${RAW_COLUMNS}) VALUES (${RAW_COLUMNS.split(',').map(() => '?').join(',')})`;
const rollupSql = (table: string) => `INSERT INTO ${table} (${ROLLUP_COLUMNS}) VALUES (${ROLLUP_COLUMNS.split(',').map(() => '?').join(',')})`;
const ALARM_SQL =
  'INSERT INTO alarms (box_id, site_id, customer_id, rule_id, priority, state, condition_active, value, message, raised_at, cleared_at, acknowledged_at, acknowledged_by, shelved_until, reopen_count, escalation_step, next_escalation_at, created_at, updated_at) VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,NULL,?,-1,?,?,?)';
const TRANSITION_SQL = 'INSERT INTO alarm_transitions (alarm_id, at, action, from_state, to_state, user_id, note) VALUES (?,?,?,?,?,?,?)';
const SNAPSHOT_SQL = 'INSERT INTO box_engine_snapshots (box_id, snapshot, saved_at) VALUES (?,?,?) ON DUPLICATE KEY UPDATE snapshot = VALUES(snapshot), saved_at = VALUES(saved_at)';

const ts = (ms: number | null): string | null => (ms === null ? null : sqlTs(ms));

/** Opens a seeding connection (UTC session, dates as strings). */
export async function openHistoryConnection(db: HistoryDb): Promise<mariadb.Connection> {
  const conn = await mariadb.createConnection({ host: db.DB_HOST, port: db.DB_PORT, user: db.DB_USER, password: db.DB_PASSWORD, database: db.DB_NAME, dateStrings: true, timezone: 'Z', connectTimeout: 5000 });
  await conn.query("SET time_zone = '+00:00'");
  return conn;
}

/** Generates and stores one box's history in one transaction; returns what it stored. */
export async function storeBoxHistory(conn: mariadb.Connection, job: HistoryJob): Promise<BoxSeedResult> {
  const boxId = job.box.boxId;
  await conn.beginTransaction();
  try {
    const gen = generateBoxHistory(job);
    let pending: Promise<unknown> | null = null;
    let generateMs = 0;
    let waitMs = 0;
    const timed = () => {
      const t = performance.now();
      const s = gen.next();
      generateMs += performance.now() - t;
      return s;
    };
    const wait = async (p: Promise<unknown> | null) => {
      const t = performance.now();
      await p;
      waitMs += performance.now() - t;
    };
    let step = timed();
    while (!step.done) {
      await wait(pending);
      pending = conn.batch(RAW_SQL, step.value);
      // Let the driver send the chunk, then compute the next one while MariaDB inserts this one.
      await yieldToLoop();
      step = timed();
    }
    await wait(pending);
    const h = step.value;
    let rollupRows = 0;
    const tail = performance.now();
    for (const r of h.rollups) {
      if (r.rows.length === 0) continue;
      await conn.batch(rollupSql(r.table), r.rows);
      rollupRows += r.rows.length;
    }
    if (h.last) await conn.query('INSERT INTO box_latest (box_id, ts, reading) VALUES (?,?,?)', [boxId, sqlTs(Date.parse(h.last.ts)), JSON.stringify(toDto(h.last))]);
    const alarms = replayAlarms(h.events, job.faults, job.technicianId, job.toMs);
    for (const a of alarms) {
      const res = (await conn.query(ALARM_SQL, [
        boxId, job.box.siteId, job.box.customerId, a.ruleId, a.priority, a.state, a.conditionActive ? 1 : 0, a.value === null ? null : String(a.value), a.message,
        ts(a.raisedAtMs), ts(a.clearedAtMs), ts(a.acknowledgedAtMs), a.acknowledgedBy, a.reopenCount, ts(a.nextEscalationAtMs), ts(a.raisedAtMs), ts(a.updatedAtMs),
      ])) as { insertId: number | bigint };
      const alarmId = Number(res.insertId);
      await conn.batch(TRANSITION_SQL, a.transitions.map((t) => [alarmId, sqlTs(t.atMs), t.action, t.fromState, t.toState, t.userId, t.note]));
    }
    await conn.query(SNAPSHOT_SQL, [boxId, JSON.stringify(h.snapshot), sqlTs(job.toMs)]);
    await conn.commit();
    waitMs += performance.now() - tail;
    return { boxId, readings: h.readings, rollupRows, alarms: alarms.length, defrostStartsMs: h.defrostStartsMs, dropped: h.dropped, generateMs, waitMs };
  } catch (err) {
    await conn.rollback().catch(() => undefined);
    throw err;
  }
}
