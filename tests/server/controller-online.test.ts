/** A controller that is reporting is online, whatever status message came before its readings. */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../server/main';
import { topics } from '../../shared/schemas/telemetry';
import { connectController, provisionBox, publishTelemetry, reading, startTelemetryServer, waitFor } from './helpers/telemetry';

let srv: RunningServer;
beforeAll(async () => {
  srv = await startTelemetryServer();
});
afterAll(async () => srv.stop());

describe('controller online state', () => {
  it('turns a controller online when its readings arrive after an offline status (a stale last will)', async () => {
    const p = await provisionBox(srv);
    const events: Array<{ serial: string; online: boolean }> = [];
    srv.ctx.bus.on('controller', (e) => events.push(e));
    const c = await connectController(srv.mqttUrl ?? '', p.serial, p.secret);
    await c.publishAsync(topics.status(p.serial), 'offline', { qos: 1 });
    await waitFor(() => events.some((e) => e.serial === p.serial && !e.online));
    await publishTelemetry(c, p.serial, reading());
    await waitFor(() => events.some((e) => e.serial === p.serial && e.online));
    await srv.ingest?.drain();
    await srv.ingest?.stop();
    const ctl = await srv.ctx.models.Controller.findByPk(p.controller.id);
    expect(ctl?.online).toBe(true);
    expect(ctl?.lastSeenAt).not.toBeNull();
    c.end(true);
  });
});
