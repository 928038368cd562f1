/**
 * Several commit streams (INGEST_COMMIT_STREAMS, server/telemetry/writer.ts CommitStreams): a batch
 * split by box over writers that commit at once stores each reading once with its rollups, and a
 * batch whose one part failed is written again without counting the committed part twice, while
 * that part's readings are still answered as newly stored (so the alarms and live screens get them).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { QueryTypes } from 'sequelize';
import type { RunningServer } from '../../server/main';
import { convertReading, type BoxInfo, type ConvertedReading } from '../../server/telemetry/convert';
import { CommitStreams, ReadingWriter } from '../../server/telemetry/writer';
import { loadConfig } from '../../server/config';
import { TelemetryPayload } from '../../shared/schemas/telemetry';
import { provisionBox, reading, startTelemetryServer } from './helpers/telemetry';

let srv: RunningServer;
const made: CommitStreams[] = [];

beforeAll(async () => {
  srv = await startTelemetryServer();
});
afterAll(async () => {
  for (const w of made) await w.close();
  await srv.stop();
});

function streams(n: number): CommitStreams {
  const w = new CommitStreams(srv.ctx.config, n);
  made.push(w);
  return w;
}

async function boxInfo(): Promise<BoxInfo> {
  const p = await provisionBox(srv);
  return { boxId: p.box.id, customerId: p.customer.id, controllerId: p.controller.id, serial: p.serial, refrigerant: p.box.refrigerant, saturationMethod: p.box.saturationMethod, valveType: p.box.valveType, elevationM: 0, valveFullSteps: 1600, disabled: false };
}

/** Readings of the boxes every 10 s over a minute two hours ago (one 1 h bucket). */
function batchOf(infos: BoxInfo[]): ConvertedReading[] {
  const t0 = Math.floor((Date.now() - 2 * 3_600_000) / 3_600_000) * 3_600_000;
  return infos.flatMap((info) => Array.from({ length: 6 }, (_, i) => convertReading(TelemetryPayload.parse(reading({ ts: new Date(t0 + i * 10_000).toISOString() })), info)));
}

async function counts(boxIds: number[]): Promise<{ raw: number; samples1h: number }> {
  const [raw] = await srv.ctx.sequelize.query<{ n: number }>('SELECT COUNT(*) AS n FROM readings WHERE box_id IN (:ids)', { replacements: { ids: boxIds }, type: QueryTypes.SELECT });
  const [r1h] = await srv.ctx.sequelize.query<{ n: number | null }>('SELECT SUM(samples) AS n FROM readings_1h WHERE box_id IN (:ids)', { replacements: { ids: boxIds }, type: QueryTypes.SELECT });
  return { raw: Number(raw?.n ?? 0), samples1h: Number(r1h?.n ?? 0) };
}

describe('commit streams', () => {
  it('default to 2 per ingest (config) and accept 1 to 8', () => {
    expect(loadConfig({}).INGEST_COMMIT_STREAMS).toBe(2);
    expect(() => loadConfig({ INGEST_COMMIT_STREAMS: '0' })).toThrow();
    expect(() => loadConfig({ INGEST_COMMIT_STREAMS: '9' })).toThrow();
  });

  it('split a batch by box over the streams and store every reading once with its rollups', async () => {
    const infos = await Promise.all([1, 2, 3, 4].map(() => boxInfo()));
    const w = streams(2);
    // Both streams take part (box ids are consecutive).
    expect(new Set(infos.map((i) => w.streamOf(i.boxId))).size).toBe(2);
    const batch = batchOf(infos);
    const res = await w.flush(batch);
    expect(res.stored).toHaveLength(batch.length);
    expect(res.duplicates).toBe(0);
    expect(await counts(infos.map((i) => i.boxId))).toEqual({ raw: 24, samples1h: 24 });
    // The same batch again (a re-delivery) adds nothing.
    const again = await w.flush(batch);
    expect(again.stored).toHaveLength(0);
    expect(again.duplicates).toBe(batch.length);
    expect(await counts(infos.map((i) => i.boxId))).toEqual({ raw: 24, samples1h: 24 });
  });

  it('after one part failed, write the batch again storing and counting each reading once, and answer the part committed before as stored', async () => {
    const infos = await Promise.all([1, 2].map(() => boxInfo()));
    const w = streams(2);
    const failing = infos.find((i) => w.streamOf(i.boxId) === 1);
    expect(failing).toBeDefined();
    const stream1 = (w as unknown as { streams: ReadingWriter[] }).streams[1] as ReadingWriter;
    const real = stream1.flush.bind(stream1);
    let fail = true;
    stream1.flush = async (b, at) => {
      if (fail) {
        fail = false;
        throw Object.assign(new Error('Deadlock found when trying to get lock'), { errno: 1213 });
      }
      return real(b, at);
    };
    const batch = batchOf(infos);
    await expect(w.flush(batch)).rejects.toThrow(/Deadlock/);
    // Stream 0 committed its box; stream 1 did not.
    const ids = infos.map((i) => i.boxId);
    expect(await counts(ids)).toEqual({ raw: 6, samples1h: 6 });
    const res = await w.flush(batch);
    expect(res.stored).toHaveLength(12);
    expect(res.duplicates).toBe(0);
    expect(await counts(ids)).toEqual({ raw: 12, samples1h: 12 });
  });
});
