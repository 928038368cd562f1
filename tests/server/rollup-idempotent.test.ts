import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type mariadb from 'mariadb';
import { QueryTypes } from 'sequelize';
import type { RunningServer } from '../../server/main';
import { convertReading, type BoxInfo, type ConvertedReading } from '../../server/telemetry/convert';
import { ReadingWriter } from '../../server/telemetry/writer';
import { TelemetryPayload } from '../../shared/schemas/telemetry';
import { connectController, provisionBox, publishTelemetry, reading, startTelemetryServer, storedRows, waitFor } from './helpers/telemetry';

let srv: RunningServer;
let url: string;
const writers: ReadingWriter[] = [];

beforeAll(async () => {
  srv = await startTelemetryServer();
  url = srv.mqttUrl ?? '';
});
afterAll(async () => {
  for (const w of writers) await w.close();
  await srv.stop();
});

function newWriter(): ReadingWriter {
  const w = new ReadingWriter(srv.ctx.config, 1);
  writers.push(w);
  return w;
}

/** The start of the hour two hours ago: every reading of a test lands in one 1 min, 15 min and 1 h bucket. */
const hourStartMs = () => Math.floor((Date.now() - 2 * 3_600_000) / 3_600_000) * 3_600_000;

async function provisioned() {
  const p = await provisionBox(srv);
  const info: BoxInfo = {
    boxId: p.box.id,
    customerId: p.customer.id,
    controllerId: p.controller.id,
    serial: p.serial,
    refrigerant: p.box.refrigerant,
    saturationMethod: p.box.saturationMethod,
    valveType: p.box.valveType,
    elevationM: 0,
    valveFullSteps: 1600,
    disabled: false,
  };
  return { p, info };
}

/** A converted reading of the box at an instant (ms), through the same schema and conversion as the ingest. */
function converted(info: BoxInfo, tsMs: number, boxAirC = 2.4): ConvertedReading {
  return convertReading(TelemetryPayload.parse(reading({ ts: new Date(tsMs).toISOString(), boxAirC })), info);
}

interface RollupRow {
  tbl: string;
  samples: number;
  box_air_sum_c: number;
  covered_ms: number;
  compressor_ms: number;
}

async function rollups(boxId: number): Promise<RollupRow[]> {
  const q = (t: string) => `SELECT '${t}' AS tbl, samples, box_air_sum_c, covered_ms, compressor_ms FROM ${t} WHERE box_id = ?`;
  const rows = await srv.ctx.sequelize.query<RollupRow>(`${q('readings_1m')} UNION ALL ${q('readings_15m')} UNION ALL ${q('readings_1h')} ORDER BY tbl`, {
    replacements: [boxId, boxId, boxId],
    type: QueryTypes.SELECT,
  });
  return rows.map((r) => ({ tbl: r.tbl, samples: Number(r.samples), box_air_sum_c: Number(r.box_air_sum_c), covered_ms: Number(r.covered_ms), compressor_ms: Number(r.compressor_ms) }));
}

async function latestTs(boxId: number): Promise<string | undefined> {
  const [row] = await srv.ctx.sequelize.query<{ ts: Date | string }>('SELECT ts FROM box_latest WHERE box_id = ?', { replacements: [boxId], type: QueryTypes.SELECT });
  return row ? new Date(row.ts).toISOString() : undefined;
}

/** Makes the writer's next commit go through and then fail as if the server's answer were lost. */
function loseNextCommitAnswer(w: ReadingWriter): void {
  const pool = (w as unknown as { pool: mariadb.Pool }).pool;
  const getConnection = pool.getConnection.bind(pool);
  pool.getConnection = async () => {
    pool.getConnection = getConnection;
    const conn = await getConnection();
    const commit = conn.commit.bind(conn);
    conn.commit = async () => {
      conn.commit = commit;
      await commit();
      throw Object.assign(new Error('Connection lost: the answer to COMMIT never arrived'), { code: 'ER_SOCKET_UNEXPECTED_CLOSE' });
    };
    return conn;
  };
}

describe('telemetry schema', () => {
  it('spells every instant as millisecond UTC ISO, so two spellings of one instant are equal', () => {
    const short = TelemetryPayload.parse(reading({ ts: '2026-12-03T10:15:00.5Z' }));
    const long = TelemetryPayload.parse(reading({ ts: '2026-12-03T10:15:00.500Z' }));
    const none = TelemetryPayload.parse(reading({ ts: '2026-12-03T10:15:00Z' }));
    expect(short.ts).toBe('2026-12-03T10:15:00.500Z');
    expect(long.ts).toBe(short.ts);
    expect(none.ts).toBe('2026-12-03T10:15:00.000Z');
  });
});

describe('ReadingWriter rollups', () => {
  it('stores one raw row and counts one sample when a batch holds two spellings of the same instant', async () => {
    const { p, info } = await provisioned();
    const ms = hourStartMs() + 10_500;
    const long = converted(info, ms);
    const short = { ...long, ts: long.ts.replace('.500Z', '.5Z') };
    expect(short.ts).not.toBe(long.ts);
    const res = await newWriter().flush([long, short]);
    expect(res.stored).toHaveLength(1);
    expect(res.duplicates).toBe(1);
    expect(await storedRows(srv, p.box.id)).toHaveLength(1);
    expect((await rollups(p.box.id)).map((r) => [r.tbl, r.samples])).toEqual([
      ['readings_15m', 1],
      ['readings_1h', 1],
      ['readings_1m', 1],
    ]);
  });

  it('adds nothing the second time a batch is written after a commit whose answer was lost', async () => {
    const { p, info } = await provisioned();
    const t0 = hourStartMs();
    const w = newWriter();
    await w.flush([converted(info, t0 + 10_000)]);
    const batch = [converted(info, t0 + 20_000), converted(info, t0 + 30_000)];
    loseNextCommitAnswer(w);
    await expect(w.flush(batch)).rejects.toThrow(/answer to COMMIT/);
    const afterLost = await rollups(p.box.id);
    // Three readings 10 s apart: the first has no predecessor, so 20 s are covered.
    expect(afterLost.map((r) => [r.samples, r.covered_ms])).toEqual([
      [3, 20_000],
      [3, 20_000],
      [3, 20_000],
    ]);
    const retry = await w.flush(batch);
    expect(retry.stored).toHaveLength(0);
    expect(retry.duplicates).toBe(2);
    expect(await rollups(p.box.id)).toEqual(afterLost);
    expect(await storedRows(srv, p.box.id)).toHaveLength(3);
    expect(await latestTs(p.box.id)).toBe(new Date(t0 + 30_000).toISOString());
    // The next reading is credited with its own 10 s only, not with the span already counted.
    await w.flush([converted(info, t0 + 40_000)]);
    expect((await rollups(p.box.id)).map((r) => [r.samples, r.covered_ms])).toEqual([
      [4, 30_000],
      [4, 30_000],
      [4, 30_000],
    ]);
  });

  it('counts only the new reading when a writer with an older view re-writes readings another writer stored', async () => {
    const { p, info } = await provisioned();
    const t0 = hourStartMs();
    const stale = newWriter();
    await stale.flush([converted(info, t0 + 10_000, 2)]);
    const batch = [converted(info, t0 + 20_000, 3), converted(info, t0 + 30_000, 4)];
    await newWriter().flush(batch);
    const before = await rollups(p.box.id);
    expect(before.map((r) => [r.samples, r.box_air_sum_c])).toEqual([
      [3, 9],
      [3, 9],
      [3, 9],
    ]);
    const res = await stale.flush([...batch, converted(info, t0 + 40_000, 5)]);
    expect(res.stored.map((r) => r.ts)).toEqual([new Date(t0 + 40_000).toISOString()]);
    expect(res.duplicates).toBe(2);
    // Readings 10 s apart: 30 s covered in all, none of it twice.
    expect((await rollups(p.box.id)).map((r) => [r.samples, r.box_air_sum_c, r.covered_ms])).toEqual([
      [4, 14, 30_000],
      [4, 14, 30_000],
      [4, 14, 30_000],
    ]);
    expect(await storedRows(srv, p.box.id)).toHaveLength(4);
    expect(await latestTs(p.box.id)).toBe(new Date(t0 + 40_000).toISOString());
  });

  it('keeps the latest reading when an older batch is written again after a newer one', async () => {
    const { p, info } = await provisioned();
    const t0 = hourStartMs();
    const w = newWriter();
    const older = [converted(info, t0 + 10_000)];
    await w.flush(older);
    await w.flush([converted(info, t0 + 50_000)]);
    await w.flush(older);
    expect(await latestTs(p.box.id)).toBe(new Date(t0 + 50_000).toISOString());
    expect((await rollups(p.box.id)).map((r) => r.samples)).toEqual([2, 2, 2]);
  });
});

describe('telemetry ingest duplicates', () => {
  it('stores one reading and one rollup sample when a controller sends the same instant spelled two ways', async () => {
    const { p } = await provisioned();
    const c = await connectController(url, p.serial, p.secret);
    const iso = new Date(Math.floor((Date.now() - 120_000) / 1000) * 1000 + 500).toISOString();
    await publishTelemetry(c, p.serial, reading({ ts: iso.replace('.500Z', '.5Z') }));
    await publishTelemetry(c, p.serial, reading({ ts: iso }));
    await waitFor(async () => (await storedRows(srv, p.box.id)).length > 0);
    await srv.ingest?.drain();
    const rows = await storedRows(srv, p.box.id);
    expect(rows).toHaveLength(1);
    expect((await rollups(p.box.id)).map((r) => r.samples)).toEqual([1, 1, 1]);
    await c.endAsync();
  });
});
