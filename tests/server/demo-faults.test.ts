import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { QueryTypes } from 'sequelize';
import type { RunningServer } from '../../server/main';
import { sqlTs } from '../../server/db/sequelize';
import { startFleet, type Fleet } from '../../simulator/fleet';
import { factories, signIn } from './helpers/app';
import { provisionBox, startTelemetryServer, waitFor } from './helpers/telemetry';

// An admin injects a simulated fault from the UI; the simulator receives it on the fault channel.
let srv: RunningServer;
let fleet: Fleet | null = null;
const quiet = { info: () => {}, warn: () => {}, error: () => {} };

beforeAll(async () => {
  srv = await startTelemetryServer({ DEMO_MODE: '1' });
});
afterAll(async () => {
  await fleet?.stop();
  await srv.stop();
});

describe('POST /api/v1/demo/faults', () => {
  it('reaches the simulated controller: a door left ajar shows in its next readings', async () => {
    const p = await provisionBox(srv);
    const b = p.box;
    fleet = await startFleet({
      controllers: [
        {
          serial: p.serial, secret: p.secret, boxId: b.id, kind: 'cooler', valveType: 'eev', refrigerant: 'R-448A', setpointC: b.setpointC, differentialK: b.differentialK,
          superheatTargetK: b.superheatTargetK, valveFullSteps: 1600, elevationM: 0, defrostType: b.defrostType, defrostIntervalH: b.defrostIntervalH, defrostMaxMin: b.defrostMaxMin,
          defrostTerminationC: b.defrostTerminationC, dripMin: b.dripMin, fanDelayMin: b.fanDelayMin,
        },
      ],
      url: srv.mqttUrl ?? '',
      speed: 20,
      startAgoS: 600,
      intervalS: 10,
      firstSeq: 0,
      faultChannel: true,
      simUser: srv.ctx.config.MQTT_SIM_USER,
      simPassword: srv.ctx.config.MQTT_SIM_PASSWORD,
      logger: quiet,
    });
    const model = fleet.controllers.get(p.serial)?.model;
    if (!model) throw new Error('simulated controller missing');
    expect(model.faults.has('door-ajar')).toBe(false);
    const admin = await factories(srv).user('admin');
    const { agent, csrf } = await signIn(srv, admin.email, admin.password);
    const res = await agent.post('/api/v1/demo/faults').set('x-csrf-token', csrf).send({ boxId: b.id, fault: 'door-ajar', on: true });
    expect(res.status).toBe(202);
    // The command crossed the broker to the simulator's fault channel…
    await waitFor(() => model.faults.has('door-ajar'), 10_000, 50);
    // …and the controller now reports the door open.
    const open = await waitFor(async () => {
      const rows = await srv.ctx.sequelize.query<{ n: number }>('SELECT COUNT(*) AS n FROM readings WHERE box_id = ? AND door_open = 1 AND ts >= ?', {
        replacements: [b.id, sqlTs(Date.now() - 5 * 60_000)],
        type: QueryTypes.SELECT,
      });
      return Number(rows[0]?.n) > 0;
    }, 20_000, 200);
    expect(open).toBe(true);
    const tech = await factories(srv).user('technician');
    const t = await signIn(srv, tech.email, tech.password);
    await t.agent.post('/api/v1/demo/faults').set('x-csrf-token', t.csrf).send({ boxId: b.id, fault: 'door-ajar', on: false }).expect(403);
    const bad = await agent.post('/api/v1/demo/faults').set('x-csrf-token', csrf).send({ boxId: b.id, fault: 'meltdown', on: true });
    expect(bad.status).toBe(400);
  });
});
