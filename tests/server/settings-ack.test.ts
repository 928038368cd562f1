import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { MqttClient } from 'mqtt';
import type { RunningServer } from '../../server/main';
import { EVAPORATOR_SUPERHEAT_FLOOR_K } from '../../shared/field';
import { screenAppliedSettings } from '../../shared/schemas/settings';
import { ConfigSetPayload, topics } from '../../shared/schemas/telemetry';
import { factories, signIn } from './helpers/app';
import { connectController, provisionBox, startTelemetryServer, waitFor } from './helpers/telemetry';

let srv: RunningServer;
let url: string;
let f: ReturnType<typeof factories>;

beforeAll(async () => {
  srv = await startTelemetryServer();
  url = srv.mqttUrl ?? '';
  f = factories(srv);
});
afterAll(async () => srv.stop());

// The test box (tests/server/helpers/app.ts boxBody) is a cooler on R-448A: setpoint 2 °C,
// low limit 0 °C, high limit 5 °C (41 °F: FDA Food Code 3-501.16(A)(2) cold holding).

/** Requests a change through the API as a technician and waits until the controller received its config/set. */
async function requestChange(body: Record<string, unknown>) {
  const p = await provisionBox(srv);
  const tech = await f.user('technician');
  const { agent, csrf } = await signIn(srv, tech.email, tech.password);
  const ctl = await connectController(url, p.serial, p.secret);
  await ctl.subscribeAsync(topics.configSet(p.serial), { qos: 1 });
  const received = new Promise<ConfigSetPayload>((resolve) => ctl.on('message', (_t, m) => resolve(ConfigSetPayload.parse(JSON.parse(m.toString())))));
  const res = await agent.put(`/api/v1/boxes/${p.box.id}/settings`).set('x-csrf-token', csrf).send(body);
  expect(res.status).toBe(202);
  const cfg = await received;
  return { p, ctl, id: cfg.id };
}

async function ackAndWait(ctl: MqttClient, serial: string, ack: Record<string, unknown>) {
  await ctl.publishAsync(topics.configAck(serial), JSON.stringify(ack), { qos: 1 });
  const id = String(ack.id);
  // The outcome's audit entry is the ack handler's last write.
  await waitFor(async () => (await srv.ctx.models.AuditEntry.findAll({ where: { action: ['box.settings.applied', 'box.settings.rejected'] } })).some((a) => a.detail?.includes(id)));
  const change = await srv.ctx.models.SettingsChange.findByPk(id);
  if (!change) throw new Error(`settings change ${id} is gone`);
  return change;
}

async function auditOf(boxId: number, action: string) {
  const rows = await srv.ctx.models.AuditEntry.findAll({ where: { entityType: 'box', entityId: String(boxId), action } });
  return rows.map((r) => JSON.parse(r.detail ?? 'null') as { changeId: string; refused?: Record<string, string>; reported?: Record<string, unknown> });
}

describe('config/ack from a controller', () => {
  it('applies the requested setpoint but not a refrigerant nobody asked for, and audits the refused field', async () => {
    const { p, ctl, id } = await requestChange({ setpointC: 2.5 });
    // R-404A instead of the box's R-448A: an invented report of a change nobody requested.
    const change = await ackAndWait(ctl, p.serial, { id, ok: true, applied: { setpointC: 2.5, refrigerant: 'R-404A' } });
    expect(change.state).toBe('applied');
    expect(JSON.parse(change.applied ?? '{}')).toEqual({ setpointC: 2.5 });
    expect(change.error).toMatch(/refrigerant/);
    await p.box.reload();
    expect(p.box.refrigerant).toBe('R-448A');
    expect(p.box.setpointC).toBe(2.5);
    const refused = await auditOf(p.box.id, 'box.settings.ack-refused');
    expect(refused).toHaveLength(1);
    expect(refused[0]?.changeId).toBe(id);
    expect(Object.keys(refused[0]?.refused ?? {})).toEqual(['refrigerant']);
    expect(refused[0]?.reported).toEqual({ setpointC: 2.5, refrigerant: 'R-404A' });
    await ctl.endAsync();
  });

  it('refuses a reported setpoint outside the alarm limits, leaves the box unchanged and audits it', async () => {
    const { p, ctl, id } = await requestChange({ setpointC: 3 });
    // 7 °C passes the protocol's range but lies above the box's 5 °C high limit.
    const change = await ackAndWait(ctl, p.serial, { id, ok: true, applied: { setpointC: 7 } });
    expect(change.state).toBe('rejected');
    expect(change.error).toMatch(/setpointC/);
    await p.box.reload();
    expect(p.box.setpointC).toBe(2);
    const refused = await auditOf(p.box.id, 'box.settings.ack-refused');
    expect(refused.map((r) => Object.keys(r.refused ?? {}))).toEqual([['setpointC']]);
    expect(await auditOf(p.box.id, 'box.settings.rejected')).toHaveLength(1);
    expect(await auditOf(p.box.id, 'box.settings.applied')).toHaveLength(0);
    await ctl.endAsync();
  });

  it('still applies an ack that reports exactly the requested fields within the limits', async () => {
    const { p, ctl, id } = await requestChange({ setpointC: 3, differentialK: 2, defrost: { defrostIntervalH: 8 } });
    const change = await ackAndWait(ctl, p.serial, { id, ok: true, applied: { setpointC: 3, differentialK: 2, defrost: { defrostIntervalH: 8 } } });
    expect(change.state).toBe('applied');
    expect(change.error).toBeNull();
    await p.box.reload();
    expect([p.box.setpointC, p.box.differentialK, p.box.defrostIntervalH]).toEqual([3, 2, 8]);
    expect(await auditOf(p.box.id, 'box.settings.ack-refused')).toHaveLength(0);
    expect(await auditOf(p.box.id, 'box.settings.applied')).toHaveLength(1);
    await ctl.endAsync();
  });
});

describe('screenAppliedSettings', () => {
  const cooler = { lowLimitC: 0, highLimitC: 5, valveType: 'eev' as const, overridden: false };

  it('refuses a defrost type other than the requested one and a defrost field not requested', () => {
    const s = screenAppliedSettings({ defrost: { defrostType: 'electric' } }, { defrost: { defrostType: 'hot-gas', dripMin: 3 } }, cooler);
    expect(s.accepted).toEqual({});
    expect(Object.keys(s.refused).sort()).toEqual(['defrost.defrostType', 'defrost.dripMin']);
  });

  it('refuses a superheat target below the evaporator superheat floor (common practice) unless the request was overridden', () => {
    // Common practice: about 5 °F (2.78 K) of superheat is kept so liquid does not reach the compressor.
    const low = EVAPORATOR_SUPERHEAT_FLOOR_K - 0.5;
    expect(screenAppliedSettings({ superheatTargetK: 3.3 }, { superheatTargetK: low }, cooler).refused).toHaveProperty('superheatTargetK');
    expect(screenAppliedSettings({ superheatTargetK: low }, { superheatTargetK: low }, { ...cooler, overridden: true }).accepted).toEqual({ superheatTargetK: low });
  });

  it('refuses a superheat target on a thermostatic-valve box', () => {
    expect(screenAppliedSettings({ superheatTargetK: 4 }, { superheatTargetK: 4 }, { ...cooler, valveType: 'txv' }).refused).toHaveProperty('superheatTargetK');
  });
});
