/**
 * With the simulator running, restart the broker, crash and restart the ingest, and stop MariaDB
 * for 30 s; afterwards every seq each controller had acknowledged by the broker is stored exactly once.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { QueryTypes } from 'sequelize';
import type { RunningServer } from '../../server/main';
import { MariaInstance } from '../../scripts/lib/mariadb';
import { startFleet, type Fleet } from '../../simulator/fleet';
import type { FleetController } from '../../simulator/fleetFile';
import { fleetEntry, provisionBox, startTelemetryServer, waitFor } from './helpers/telemetry';

const DB_OUTAGE_MS = Number(process.env.TEST_DB_OUTAGE_MS ?? 30_000);
const quiet = { info: () => {}, warn: () => {}, error: () => {} };
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

let srv: RunningServer;
let fleet: Fleet | null = null;
const boxes = new Map<string, number>();

beforeAll(async () => {
  srv = await startTelemetryServer();
});
afterAll(async () => {
  await fleet?.stop();
  await srv.stop();
});

async function storedSeqs(boxId: number): Promise<number[]> {
  const rows = await srv.ctx.sequelize.query<{ seq: number | string }>('SELECT seq FROM readings WHERE box_id = ? ORDER BY seq', { replacements: [boxId], type: QueryTypes.SELECT });
  return rows.map((r) => Number(r.seq));
}

describe('nothing is lost', () => {
  it('stores every acknowledged reading exactly once across a broker restart, an ingest crash and a 30 s database outage', async () => {
    const specs: Array<Partial<FleetController> & { kind: 'cooler' | 'freezer' }> = [
      { kind: 'cooler', refrigerant: 'R-448A', valveType: 'eev' },
      { kind: 'freezer', refrigerant: 'R-404A', valveType: 'eev' },
      { kind: 'cooler', refrigerant: 'R-134a', valveType: 'txv' },
    ];
    const controllers: FleetController[] = [];
    for (const s of specs) {
      const freezer = s.kind === 'freezer';
      const p = await provisionBox(srv, {
        kind: s.kind,
        refrigerant: s.refrigerant,
        valveType: s.valveType,
        setpointC: freezer ? -20 : 2,
        highLimitC: freezer ? -12 : 5,
        lowLimitC: freezer ? -30 : 0,
        defrostType: freezer ? 'electric' : 'off-cycle',
        defrostTerminationC: freezer ? 10 : 5,
        superheatTargetK: 3.3,
      });
      boxes.set(p.serial, p.box.id);
      controllers.push(fleetEntry(p.box, p.serial, p.secret));
    }
    // Simulated time runs 60x from two hours ago: a reading every 10 simulated s is 6 per real s per controller.
    fleet = await startFleet({ controllers, url: srv.mqttUrl ?? '', speed: 60, startAgoS: 7200, intervalS: 10, firstSeq: 0, faultChannel: false, reconnectMinMs: 100, reconnectMaxMs: 1000, logger: quiet });
    await sleep(3000);

    // 1. Broker restart: controllers buffer while it is down and replay in order afterwards.
    const broker = srv.broker;
    if (!broker) throw new Error('embedded broker expected');
    await broker.stop();
    await sleep(1500);
    await broker.start();
    await sleep(3000);

    // 2. Ingest crash: whatever it had received but not committed is delivered again.
    const ingest = srv.ingest;
    if (!ingest) throw new Error('ingest expected');
    await ingest.kill();
    await sleep(1500);
    await ingest.start();
    await sleep(3000);

    // 3. MariaDB stopped for 30 s: the ingest pauses unacknowledged, the broker keeps the messages.
    const dataDir = process.env.TEST_DB_DATADIR;
    if (!dataDir) throw new Error('run through npm test (TEST_DB_DATADIR)');
    const db = new MariaInstance({ dataDir, port: Number(process.env.TEST_DB_PORT), bufferPoolMiB: 256, redoLogMiB: 128, log: () => {} });
    await db.stop(true);
    await sleep(DB_OUTAGE_MS);
    await db.start();
    await sleep(3000);

    // Let every controller empty its buffer, then stop publishing.
    await waitFor(() => [...fleet!.stats().buffered.values()].every((b) => b.length === 0), 30_000, 200);
    const stats = fleet.stats();
    await fleet.stop();
    fleet = null;

    let total = 0;
    for (const [serial, published] of stats.published) {
      const boxId = boxes.get(serial);
      if (!boxId) throw new Error(`unknown serial ${serial}`);
      const expected = [...new Set(published)].sort((a, b) => a - b);
      total += expected.length;
      const stored = await waitFor(async () => {
        const s = await storedSeqs(boxId);
        return s.length >= expected.length ? s : null;
      }, 30_000, 200);
      // Exactly once: the same set, no duplicates.
      expect(stored).toEqual(expected);
      expect(stats.dropped.get(serial) ?? []).toEqual([]);
    }
    // The run did exercise the paths: readings before and after each disruption, and one database outage.
    expect(total).toBeGreaterThan(100);
    expect(ingest.counts.outages).toBeGreaterThanOrEqual(1);
  }, 180_000);
});
