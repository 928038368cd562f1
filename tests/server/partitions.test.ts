import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { QueryTypes } from 'sequelize';
import type { RunningServer } from '../../server/main';
import { listPartitions, maintainPartitions, type PartitionedTable } from '../../server/telemetry/partitions';
import { resolutionFor } from '../../server/telemetry/queries';
import { startTestServer } from './helpers/app';

let srv: RunningServer;
// Scratch copies of the real tables (CREATE TABLE … LIKE keeps the partitioning), so the test can move time.
const raw: PartitionedTable = { table: 'readings_parttest', grain: 'day', retention: 'raw' };
const roll: PartitionedTable = { table: 'readings_1h_parttest', grain: 'month', retention: 'rollup' };

beforeAll(async () => {
  srv = await startTestServer();
  const q = srv.ctx.sequelize;
  await q.query('DROP TABLE IF EXISTS readings_parttest, readings_1h_parttest');
  await q.query('CREATE TABLE readings_parttest LIKE readings');
  await q.query('CREATE TABLE readings_1h_parttest LIKE readings_1h');
});
afterAll(async () => {
  await srv.ctx.sequelize.query('DROP TABLE IF EXISTS readings_parttest, readings_1h_parttest');
  await srv.stop();
});

const insertRaw = (ts: string) =>
  srv.ctx.sequelize.query(
    `INSERT INTO readings_parttest (box_id, ts, seq, received_at, refrigerant, box_air_c, suction_kpa_g, suction_line_c, compressor_on, fan_on, defrost_on, door_open) VALUES (1, ?, 1, ?, 'R-448A', 2, 250, -2, 1, 1, 0, 0)`,
    { replacements: [ts, ts] },
  );
const count = async () => Number((await srv.ctx.sequelize.query<{ n: number }>('SELECT COUNT(*) AS n FROM readings_parttest', { type: QueryTypes.SELECT }))[0]?.n);

describe('telemetry partitions and retention', () => {
  it('creates daily partitions a week ahead and monthly rollup partitions, without one per day of the gap', async () => {
    const now = new Date('2026-12-01T12:00:00Z');
    await maintainPartitions(srv.ctx.sequelize, { rawDays: 90, rollupDays: 1095 }, now, [raw, roll]);
    const parts = await listPartitions(srv.ctx.sequelize, raw.table);
    const names = parts.map((p) => p.name);
    expect(names).toContain('p20261201');
    expect(names).toContain('p20261208');
    expect(names[names.length - 1]).toBe('pmax');
    // 90 days kept plus 8 ahead, plus the catch-all partitions: far fewer than one per day since January.
    expect(parts.length).toBeLessThan(110);
    const rparts = (await listPartitions(srv.ctx.sequelize, roll.table)).map((p) => p.name);
    expect(rparts).toContain('p20261201');
    expect(rparts).toContain('p20270101');
  });

  it('drops raw partitions past the retention and keeps the rest', async () => {
    await insertRaw('2026-09-15 10:00:00.000'); // older than 90 days at the second run
    await insertRaw('2026-11-30 10:00:00.000');
    expect(await count()).toBe(2);
    const later = new Date('2026-12-20T12:00:00Z'); // 90 days before: 2026-09-21
    const r = await maintainPartitions(srv.ctx.sequelize, { rawDays: 90, rollupDays: 1095 }, later, [raw, roll]);
    expect(r.dropped).toContain('readings_parttest.p20260915');
    expect(await count()).toBe(1);
    const names = (await listPartitions(srv.ctx.sequelize, raw.table)).map((p) => p.name);
    expect(names).toContain('p20261227');
    expect(names).not.toContain('p20260920');
  });

  it('is idempotent', async () => {
    const now = new Date('2026-12-20T12:00:00Z');
    const r = await maintainPartitions(srv.ctx.sequelize, { rawDays: 90, rollupDays: 1095 }, now, [raw, roll]);
    expect(r).toEqual({ added: [], dropped: [] });
  });
});

describe('chart resolution', () => {
  it('never reads raw rows for a week', () => {
    expect(resolutionFor(7 * 86_400_000)).toBe('15m');
    expect(resolutionFor(6 * 3_600_000)).toBe('raw');
    expect(resolutionFor(24 * 3_600_000)).toBe('1m');
    expect(resolutionFor(90 * 86_400_000)).toBe('1h');
  });
});
