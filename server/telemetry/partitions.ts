/**
 * Time partitions of the telemetry tables and the retention job: raw readings in daily
 * partitions (dropped after RETENTION_RAW_DAYS), rollups in monthly ones (after
 * RETENTION_ROLLUP_DAYS). Partitions are created a week (raw) or two months (rollups) ahead by
 * splitting the catch-all `pmax` partition. Runs at start and hourly (node-cron, UTC).
 */
import cron from 'node-cron';
import { QueryTypes, type Sequelize } from 'sequelize';
import type { Logger } from '../logger';

type Grain = 'day' | 'month';

export interface PartitionedTable {
  table: string;
  grain: Grain;
  retention: 'raw' | 'rollup';
}

const TABLES: PartitionedTable[] = [
  { table: 'readings', grain: 'day', retention: 'raw' },
  { table: 'readings_1m', grain: 'month', retention: 'rollup' },
  { table: 'readings_15m', grain: 'month', retention: 'rollup' },
  { table: 'readings_1h', grain: 'month', retention: 'rollup' },
];

const pad = (n: number) => String(n).padStart(2, '0');
const ymd = (d: Date) => `${d.getUTCFullYear()}-${pad(d.getUTCMonth() + 1)}-${pad(d.getUTCDate())}`;
const pname = (d: Date) => `p${ymd(d).replace(/-/g, '')}`;

function startOf(d: Date, grain: Grain): Date {
  return grain === 'day' ? new Date(Date.UTC(d.getUTCFullYear(), d.getUTCMonth(), d.getUTCDate())) : new Date(Date.UTC(d.getUTCFullYear(), d.getUTCMonth(), 1));
}
function next(d: Date, grain: Grain): Date {
  return grain === 'day' ? new Date(Date.UTC(d.getUTCFullYear(), d.getUTCMonth(), d.getUTCDate() + 1)) : new Date(Date.UTC(d.getUTCFullYear(), d.getUTCMonth() + 1, 1));
}

interface PartitionRow {
  name: string;
  bound: string | null;
}

/** The partitions of a table with their upper bounds (`'YYYY-MM-DD'` or null for MAXVALUE). */
export async function listPartitions(sequelize: Sequelize, table: string): Promise<PartitionRow[]> {
  const rows = await sequelize.query<{ name: string; descr: string }>(
    'SELECT PARTITION_NAME AS name, PARTITION_DESCRIPTION AS descr FROM information_schema.PARTITIONS WHERE TABLE_SCHEMA = DATABASE() AND TABLE_NAME = ? ORDER BY PARTITION_ORDINAL_POSITION',
    { replacements: [table], type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({ name: r.name, bound: r.descr === 'MAXVALUE' ? null : r.descr.replace(/'/g, '').slice(0, 10) }));
}

export interface MaintenanceResult {
  added: string[];
  dropped: string[];
}

/** Adds partitions ahead of `now` and drops those wholly older than the retention. */
export async function maintainPartitions(
  sequelize: Sequelize,
  retention: { rawDays: number; rollupDays: number },
  now = new Date(),
  tables: PartitionedTable[] = TABLES,
): Promise<MaintenanceResult> {
  const result: MaintenanceResult = { added: [], dropped: [] };
  for (const t of tables) {
    const parts = await listPartitions(sequelize, t.table);
    const bounded = parts.filter((p) => p.bound !== null);
    const lastBound = bounded.length ? new Date(`${bounded[bounded.length - 1]?.bound}T00:00:00Z`) : startOf(now, t.grain);
    const horizon = t.grain === 'day' ? new Date(now.getTime() + 8 * 86_400_000) : new Date(Date.UTC(now.getUTCFullYear(), now.getUTCMonth() + 3, 1));
    const days = t.retention === 'raw' ? retention.rawDays : retention.rollupDays;
    const cutoff = new Date(now.getTime() - days * 86_400_000);
    // Partition p<D> holds [D, next(D)). Ranges are contiguous: a gap since the last bound that is
    // already past retention becomes one partition (dropped below) instead of hundreds.
    const defs: string[] = [];
    let from = lastBound;
    const firstKept = startOf(cutoff, t.grain);
    if (firstKept > lastBound) {
      defs.push(`PARTITION ${pname(lastBound)} VALUES LESS THAN ('${ymd(firstKept)}')`);
      result.added.push(`${t.table}.${pname(lastBound)}`);
      from = firstKept;
    }
    for (let d = startOf(from, t.grain); d < horizon; d = next(d, t.grain)) {
      if (d < from) continue;
      defs.push(`PARTITION ${pname(d)} VALUES LESS THAN ('${ymd(next(d, t.grain))}')`);
      result.added.push(`${t.table}.${pname(d)}`);
    }
    if (defs.length) {
      await sequelize.query(`ALTER TABLE ${t.table} REORGANIZE PARTITION pmax INTO (${defs.join(', ')}, PARTITION pmax VALUES LESS THAN (MAXVALUE))`);
    }
    const drop = (await listPartitions(sequelize, t.table)).filter((p) => p.bound !== null && p.name !== 'p00000000' && new Date(`${p.bound}T00:00:00Z`) <= cutoff);
    if (drop.length) {
      await sequelize.query(`ALTER TABLE ${t.table} DROP PARTITION ${drop.map((p) => p.name).join(', ')}`);
      result.dropped.push(...drop.map((p) => `${t.table}.${p.name}`));
    }
    // The first partition holds anything older than the first daily/monthly one: past retention too.
    const first = (await listPartitions(sequelize, t.table))[0];
    if (first?.name === 'p00000000' && first.bound && new Date(`${first.bound}T00:00:00Z`) <= cutoff) {
      await sequelize.query(`ALTER TABLE ${t.table} TRUNCATE PARTITION p00000000`);
    }
  }
  return result;
}

/** Runs the maintenance now and hourly; returns a stop function. */
export function scheduleRetention(sequelize: Sequelize, retention: { rawDays: number; rollupDays: number }, logger: Logger): () => void {
  const run = () =>
    maintainPartitions(sequelize, retention)
      .then((r) => {
        if (r.added.length || r.dropped.length) logger.info(r, 'telemetry partitions maintained');
      })
      .catch((err: unknown) => logger.error({ err }, 'partition maintenance failed'));
  void run();
  const task = cron.schedule('7 * * * *', run, { timezone: 'UTC', name: 'telemetry-retention', noOverlap: true });
  return () => void task.stop();
}
