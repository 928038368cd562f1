import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { QueryTypes } from 'sequelize';
import type { RunningServer } from '../../server/main';
import { superheatByPressureK, valvePercent } from '../../shared/field';
import { CommittedPayload, MAX_TELEMETRY_BYTES, topics } from '../../shared/schemas/telemetry';
import { connectController, metricValue, provisionBox, publishTelemetry, reading, startTelemetryServer, storedRows, waitFor } from './helpers/telemetry';

let srv: RunningServer;
let url: string;

beforeAll(async () => {
  srv = await startTelemetryServer();
  url = srv.mqttUrl ?? '';
});
afterAll(async () => srv.stop());

describe('telemetry ingest', () => {
  it('stores a reading with saturation and superheat equal to the shared engine on the same inputs', async () => {
    const p = await provisionBox(srv, { refrigerant: 'R-448A' }, { elevationM: 1600 });
    const c = await connectController(url, p.serial, p.secret);
    const r = reading({ suctionKPaG: 240.5, suctionLineC: -3.2, valveSteps: 612 });
    await publishTelemetry(c, p.serial, r);
    const [row] = await waitFor(async () => ((await storedRows(srv, p.box.id)).length ? storedRows(srv, p.box.id) : null));
    const expected = superheatByPressureK({ refrigerant: 'R-448A', suctionKPaG: 240.5, suctionLineC: -3.2, elevationM: 1600 });
    expect(Number(row?.saturated_suction_c)).toBeCloseTo(expected.saturatedSuctionC, 9);
    expect(Number(row?.superheat_k)).toBeCloseTo(expected.superheatK, 9);
    expect(Number(row?.valve_percent)).toBeCloseTo(valvePercent(612, 1600), 9);
    expect(Number(row?.seq)).toBe(r.seq);
    expect(row?.refrigerant).toBe('R-448A');
    await c.endAsync();
  });

  it('uses the new refrigerant from the next reading on after the box is changed', async () => {
    const p = await provisionBox(srv, { refrigerant: 'R-404A' });
    const c = await connectController(url, p.serial, p.secret);
    const t0 = Date.now() - 5000;
    await publishTelemetry(c, p.serial, reading({ ts: new Date(t0).toISOString(), suctionKPaG: 300 }));
    await waitFor(async () => (await storedRows(srv, p.box.id)).length === 1);
    await p.box.update({ refrigerant: 'R-134a' });
    srv.ctx.bus.emit('boxChanged', { boxId: p.box.id });
    // Taken after the change (a reading from before it keeps the old refrigerant: reading-quality.test.ts).
    await publishTelemetry(c, p.serial, reading({ ts: new Date().toISOString(), suctionKPaG: 300 }));
    const rows = await waitFor(async () => {
      const rs = await storedRows(srv, p.box.id);
      return rs.length === 2 ? rs : null;
    });
    expect(rows.map((x) => x.refrigerant)).toEqual(['R-404A', 'R-134a']);
    // The same gauge pressure gives a different saturation temperature for another refrigerant.
    expect(Number(rows[0]?.saturated_suction_c)).not.toBeCloseTo(Number(rows[1]?.saturated_suction_c), 0);
    await c.endAsync();
  });

  it('takes the coil-inlet thermistor as saturation for a box using that method', async () => {
    const p = await provisionBox(srv, { refrigerant: 'R-134a', saturationMethod: 'coil-thermistor' });
    const c = await connectController(url, p.serial, p.secret);
    await publishTelemetry(c, p.serial, reading({ suctionLineC: -1, coilInletC: -6.5 }));
    const [row] = await waitFor(async () => ((await storedRows(srv, p.box.id)).length ? storedRows(srv, p.box.id) : null));
    expect(Number(row?.saturated_suction_c)).toBe(-6.5);
    expect(Number(row?.superheat_k)).toBeCloseTo(5.5, 9);
    await c.endAsync();
  });

  it('stores a re-delivered reading once', async () => {
    const p = await provisionBox(srv);
    const c = await connectController(url, p.serial, p.secret);
    const r = reading();
    const dupBefore = await metricValue(srv, 'rimehold_ingest_readings_duplicate_total');
    await publishTelemetry(c, p.serial, r);
    await publishTelemetry(c, p.serial, r);
    await waitFor(async () => (await metricValue(srv, 'rimehold_ingest_readings_duplicate_total')) > dupBefore);
    expect((await storedRows(srv, p.box.id)).length).toBe(1);
    await c.endAsync();
  });

  it('rejects bad payloads with a counted reason and keeps the pipeline going', async () => {
    const p = await provisionBox(srv);
    const c = await connectController(url, p.serial, p.secret);
    const cases: Array<[string, string | Buffer]> = [
      ['bad-json', '{"seq":1,'],
      ['schema', JSON.stringify({ ...reading(), boxAirC: 'cold' })],
      ['schema', JSON.stringify({ ...reading(), boxAirC: 400 })],
      ['schema', JSON.stringify({ ...reading(), extra: 1 })],
      ['schema', JSON.stringify({ ...reading(), seq: 1.5 })],
      ['future-ts', JSON.stringify(reading({ ts: new Date(Date.now() + 3_600_000).toISOString() }))],
      ['too-old', JSON.stringify(reading({ ts: '2020-01-01T00:00:00.000Z' }))],
      ['too-large', JSON.stringify({ ...reading(), pad: 'x'.repeat(MAX_TELEMETRY_BYTES) })],
    ];
    const before = new Map<string, number>();
    for (const [reason] of cases) before.set(reason, await metricValue(srv, 'rimehold_ingest_readings_rejected_total', { reason }));
    for (const [, payload] of cases) await publishTelemetry(c, p.serial, payload);
    const good = reading();
    await publishTelemetry(c, p.serial, good);
    const rows = await waitFor(async () => {
      const rs = await storedRows(srv, p.box.id);
      return rs.length ? rs : null;
    });
    expect(rows.map((r) => Number(r.seq))).toEqual([good.seq]);
    const expectedIncrease = new Map<string, number>();
    for (const [reason] of cases) expectedIncrease.set(reason, (expectedIncrease.get(reason) ?? 0) + 1);
    for (const [reason, n] of expectedIncrease) {
      expect(await metricValue(srv, 'rimehold_ingest_readings_rejected_total', { reason })).toBe((before.get(reason) ?? 0) + n);
    }
    await c.endAsync();
  });

  it('keeps the latest reading per box and answers it with the fleet status', async () => {
    const p = await provisionBox(srv);
    const c = await connectController(url, p.serial, p.secret);
    const base = Date.now() - 60_000;
    for (let i = 0; i < 3; i++) await publishTelemetry(c, p.serial, reading({ ts: new Date(base + i * 10_000).toISOString(), boxAirC: 2 + i }));
    await waitFor(async () => (await storedRows(srv, p.box.id)).length === 3);
    const latest = await srv.ctx.sequelize.query<{ reading: string }>('SELECT reading FROM box_latest WHERE box_id = ?', { replacements: [p.box.id], type: QueryTypes.SELECT });
    expect(JSON.parse(latest[0]?.reading ?? '{}').boxAirC).toBe(4);
    await c.endAsync();
  });

  it('maintains 1-minute rollups with min, max and time-weighted compressor duty', async () => {
    const p = await provisionBox(srv);
    const c = await connectController(url, p.serial, p.secret);
    const minute = Math.floor((Date.now() - 10 * 60_000) / 60_000) * 60_000;
    // Six readings 10 s apart inside one minute; compressor on for the first three intervals.
    const temps = [2.0, 2.5, 3.0, 2.8, 2.2, 1.9];
    for (let i = 0; i < temps.length; i++) {
      await publishTelemetry(c, p.serial, reading({ ts: new Date(minute + i * 10_000).toISOString(), boxAirC: temps[i] ?? 0, compressorOn: i < 3 }));
    }
    await waitFor(async () => (await storedRows(srv, p.box.id)).length === 6);
    const [b] = await srv.ctx.sequelize.query<Record<string, number>>('SELECT * FROM readings_1m WHERE box_id = ?', { replacements: [p.box.id], type: QueryTypes.SELECT });
    expect(Number(b?.samples)).toBe(6);
    expect(Number(b?.box_air_min_c)).toBe(1.9);
    expect(Number(b?.box_air_max_c)).toBe(3.0);
    // Five intervals of 10 s are covered; the state before each is held: on, on, on, off, off.
    expect(Number(b?.covered_ms)).toBe(50_000);
    expect(Number(b?.compressor_ms)).toBe(30_000);
    const [h] = await srv.ctx.sequelize.query<Record<string, number>>('SELECT samples FROM readings_1h WHERE box_id = ?', { replacements: [p.box.id], type: QueryTypes.SELECT });
    expect(Number(h?.samples)).toBe(6);
    await c.endAsync();
  });
});

describe('broker sign-in and ACL', () => {
  it('refuses a wrong device secret and an unknown serial', async () => {
    const p = await provisionBox(srv);
    await expect(connectController(url, p.serial, 'not-the-secret')).rejects.toThrow(/Bad username or password|Not authorized|Connection refused/i);
    await expect(connectController(url, 'NOPE-0001', 'whatever')).rejects.toThrow();
  });

  it('refuses a client id that is not ctl-{serial}, so no one can take over another session', async () => {
    const p = await provisionBox(srv);
    await expect(connectController(url, p.serial, p.secret, { clientId: 'rimehold-ingest' })).rejects.toThrow();
  });

  it('does not let controller A publish as controller B', async () => {
    const a = await provisionBox(srv);
    const b = await provisionBox(srv);
    const refusedBefore = await metricValue(srv, 'rimehold_broker_refused_total', { reason: 'publish-acl' });
    const ca = await connectController(url, a.serial, a.secret);
    const closed = new Promise<void>((r) => ca.once('close', () => r()));
    ca.publish(`rimehold/v1/ctl/${b.serial}/telemetry`, JSON.stringify(reading()), { qos: 1 });
    await closed;
    ca.end(true);
    expect(await metricValue(srv, 'rimehold_broker_refused_total', { reason: 'publish-acl' })).toBe(refusedBefore + 1);
    await new Promise((r) => setTimeout(r, 300));
    expect(await storedRows(srv, b.box.id)).toHaveLength(0);
  });

  it('lets a controller subscribe only to its own config/set and committed', async () => {
    const a = await provisionBox(srv);
    const b = await provisionBox(srv);
    const ca = await connectController(url, a.serial, a.secret);
    const own = await ca.subscribeAsync(`rimehold/v1/ctl/${a.serial}/config/set`, { qos: 1 });
    expect(own[0]?.qos).toBe(1);
    expect((await ca.subscribeAsync(topics.committed(a.serial), { qos: 0 }))[0]?.qos).toBe(0);
    await expect(ca.subscribeAsync(`rimehold/v1/ctl/${b.serial}/config/set`, { qos: 1 })).rejects.toThrow();
    const again = await connectController(url, a.serial, a.secret);
    await expect(again.subscribeAsync(topics.committed(b.serial), { qos: 0 })).rejects.toThrow();
    await again.endAsync();
    await ca.endAsync().catch(() => undefined);
  });

  it("names each settled reading's seq on the controller's committed topic once it is stored, including a duplicate and a refused one", async () => {
    const p = await provisionBox(srv);
    const c = await connectController(url, p.serial, p.secret);
    const got: number[][] = [];
    c.on('message', (topic, payload) => {
      if (topic === topics.committed(p.serial)) got.push(CommittedPayload.parse(JSON.parse(payload.toString())).seqs);
    });
    await c.subscribeAsync(topics.committed(p.serial), { qos: 0 });
    const first = reading();
    await publishTelemetry(c, p.serial, first);
    const [seqs] = await waitFor(() => (got.length ? got : null));
    expect(seqs).toEqual([first.seq]);
    // The row was committed before the confirmation went out.
    expect((await storedRows(srv, p.box.id)).map((r) => Number(r.seq))).toEqual([first.seq]);
    await publishTelemetry(c, p.serial, first); // a resend after a reconnect
    const future = reading({ ts: new Date(Date.now() + 3_600_000).toISOString() }); // refused for good
    await publishTelemetry(c, p.serial, future);
    await publishTelemetry(c, p.serial, '{"seq": 5, "ts": "nonsense"}'); // no trustworthy seq: not named
    await waitFor(() => got.flat().length >= 3);
    await new Promise((r) => setTimeout(r, 200));
    expect(got.flat().sort((x, y) => x - y)).toEqual([first.seq, first.seq, future.seq].sort((x, y) => x - y));
    expect((await storedRows(srv, p.box.id)).length).toBe(1);
    await c.endAsync();
  });

  it('marks a controller online from its retained status and offline from its last will', async () => {
    const p = await provisionBox(srv);
    const c = await connectController(url, p.serial, p.secret, { will: { topic: `rimehold/v1/ctl/${p.serial}/status`, payload: Buffer.from('offline'), qos: 1, retain: true } });
    await c.publishAsync(`rimehold/v1/ctl/${p.serial}/status`, 'online', { qos: 1, retain: true });
    await waitFor(async () => (await p.controller.reload()).online === true);
    // An abrupt loss of the connection (no DISCONNECT) makes the broker publish the will.
    c.stream.destroy();
    await waitFor(async () => (await p.controller.reload()).online === false);
    c.end(true);
    // The will was retained: a service client subscribing later still sees 'offline'.
    const { default: mqtt } = await import('mqtt');
    // Only the ingest's account may read statuses, under its one client id: borrow its session for the probe.
    const ingest = srv.ingest;
    if (!ingest) throw new Error('ingest expected');
    await ingest.kill();
    const probe = await mqtt.connectAsync(url, { clientId: srv.ctx.config.MQTT_INGEST_CLIENT_ID, clean: false, username: srv.ctx.config.MQTT_INGEST_USER, password: srv.ctx.config.MQTT_INGEST_PASSWORD, protocolVersion: 4 });
    // Other tests' controllers have statuses too: wait for this one's.
    const mine = new Promise<{ payload: string; retain: boolean }>((resolve) =>
      probe.on('message', (t, m, pk) => {
        if (t === `rimehold/v1/ctl/${p.serial}/status`) resolve({ payload: m.toString(), retain: pk.retain });
      }),
    );
    await probe.subscribeAsync(`rimehold/v1/ctl/+/status`, { qos: 1 });
    expect(await mine).toEqual({ payload: 'offline', retain: true });
    await probe.endAsync();
    await ingest.start();
  });

  it('refuses a will on another controller’s topic', async () => {
    const a = await provisionBox(srv);
    const b = await provisionBox(srv);
    await expect(
      connectController(url, a.serial, a.secret, { will: { topic: `rimehold/v1/ctl/${b.serial}/status`, payload: Buffer.from('offline'), qos: 1, retain: true } }),
    ).rejects.toThrow();
  });
});

describe('broker durability', () => {
  it('keeps telemetry queued for the offline ingest across a broker restart', async () => {
    const p = await provisionBox(srv);
    const ingest = srv.ingest;
    const broker = srv.broker;
    if (!ingest || !broker) throw new Error('embedded broker and ingest expected');
    await ingest.kill();
    const c = await connectController(url, p.serial, p.secret);
    const sent = [reading(), reading(), reading(), reading(), reading()].map((r, i) => ({ ...r, ts: new Date(Date.now() - 10_000 + i * 1000).toISOString() }));
    // Each publish resolves on the broker's PUBACK, i.e. after it is in the journal.
    for (const r of sent) await publishTelemetry(c, p.serial, r);
    c.end(true);
    await broker.stop();
    await broker.start();
    await ingest.start();
    const rows = await waitFor(async () => {
      const rs = await storedRows(srv, p.box.id);
      return rs.length === sent.length ? rs : null;
    });
    expect(rows.map((r) => Number(r.seq))).toEqual(sent.map((r) => r.seq));
  });
});
