/** Many boxes raising at once (a site losing power: every controller's last will) lose no alarm. */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { MqttClient } from 'mqtt';
import type { RunningServer } from '../../server/main';
import { isTransientError } from '../../server/telemetry/writer';
import { connectController, provisionBox, startTelemetryServer, waitFor } from './helpers/telemetry';

let srv: RunningServer;
beforeAll(async () => {
  srv = await startTelemetryServer();
});
afterAll(async () => srv.stop());

describe('alarm bursts', () => {
  it('treats a deadlock wrapped by Sequelize as transient, so the transaction is run again', () => {
    expect(isTransientError({ name: 'SequelizeDatabaseError', parent: { errno: 1213 } })).toBe(true);
    expect(isTransientError({ errno: 1205 })).toBe(true);
    expect(isTransientError({ parent: { errno: 1062 } })).toBe(false);
    expect(isTransientError(null)).toBe(false);
  });

  it('stores a controller-offline alarm for each of 16 controllers whose wills fire at the same moment', async () => {
    const boxes = await Promise.all(Array.from({ length: 16 }, () => provisionBox(srv)));
    const clients: MqttClient[] = [];
    for (const p of boxes) {
      clients.push(await connectController(srv.mqttUrl ?? '', p.serial, p.secret, { will: { topic: `rimehold/v1/ctl/${p.serial}/status`, payload: Buffer.from('offline'), qos: 1, retain: false } }));
    }
    for (const c of clients) c.publish(`rimehold/v1/ctl/${c.options.username}/status`, 'online', { qos: 1 });
    await new Promise((r) => setTimeout(r, 500));
    // An abrupt loss of every connection at once: the broker publishes every will.
    for (const c of clients) c.stream.destroy();
    const ids = boxes.map((p) => p.box.id);
    const alarms = await waitFor(async () => {
      const rows = await srv.ctx.models.Alarm.findAll({ where: { boxId: ids, ruleId: 'controller-offline' } });
      return rows.length === ids.length ? rows : null;
    }, 20_000);
    expect(new Set(alarms.map((a) => a.boxId)).size).toBe(16);
    for (const c of clients) c.end(true);
  });
});
