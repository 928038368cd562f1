import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import WebSocket from 'ws';
import type { LiveEvent } from '../../shared/schemas/live';
import type { RunningServer } from '../../server/main';
import type { EventBusMap } from '../../server/events/bus';
import { connectController, publishTelemetry, reading, startTelemetryServer, storedRows, waitFor } from './helpers/telemetry';
import { call, expectStatus, signInRoles, type Sessions } from './helpers/roles';
import { boxWithController, holdAbove, waitForAlarm } from './helpers/alarms';

type TestBox = Awaited<ReturnType<typeof boxWithController>>;
type Alarm = EventBusMap['alarm'][0]['alarm'];

let srv: RunningServer;
let s: Sessions;
const boxes: TestBox[] = [];
const maintenanceEvents: Array<EventBusMap['maintenanceChanged'][0]> = [];
const alarmEvents: Alarm[] = [];

function record(server: RunningServer) {
  server.ctx.bus.on('maintenanceChanged', (e) => maintenanceEvents.push(e));
  server.ctx.bus.on('alarm', (e) => alarmEvents.push(e.alarm));
}

async function newBox(): Promise<TestBox> {
  const b = await boxWithController(srv);
  boxes.push(b);
  return b;
}

/** Publishes one reading a minute at `boxAirC`, reading time from `fromMinAgo` to `toMinAgo` minutes ago. */
async function publishBetween(b: TestBox, boxAirC: number, fromMinAgo: number, toMinAgo: number): Promise<void> {
  const now = Date.now();
  for (let m = fromMinAgo; m >= toMinAgo; m--) await publishTelemetry(b.client, b.serial, reading({ ts: new Date(now - m * 60_000).toISOString(), boxAirC }));
}

/** Waits until `n` readings of the box are stored and the alarm service has handled them. */
async function processed(b: TestBox, n: number): Promise<void> {
  await waitFor(async () => (await storedRows(srv, b.box.id)).length >= n);
  // The ingest emits `reading` right after its commit; give the bus a moment, then wait for the box's chain.
  await new Promise((r) => setTimeout(r, 200));
  await srv.alarms?.settled(b.box.id);
}

/** Opens the live socket as a signed-in session; collects every frame it receives. */
function openSocket(session: Sessions['technician']): Promise<{ ws: WebSocket; events: LiveEvent[] }> {
  const sid = session.agent.jar.getCookies({ domain: '127.0.0.1', path: '/', secure: false, script: false }).find((c) => c.name === 'sid');
  return new Promise((resolve, reject) => {
    const ws = new WebSocket(`${srv.url.replace('http', 'ws')}/ws`, { headers: { Cookie: sid ? `sid=${sid.value}` : '', Origin: srv.url } });
    const events: LiveEvent[] = [];
    ws.on('message', (d) => events.push(JSON.parse(d.toString()) as LiveEvent));
    ws.once('open', () => resolve({ ws, events }));
    ws.once('error', reject);
  });
}

async function stateOf(id: number): Promise<string | undefined> {
  return (await srv.ctx.models.Alarm.findByPk(id))?.state;
}

async function startMaintenance(boxId: number, minutes: number, note?: string) {
  const res = await call(s.technician, 'post', `/api/v1/boxes/${boxId}/maintenance`, { minutes, ...(note ? { note } : {}) });
  expectStatus(res, 201);
  await waitFor(() => maintenanceEvents.some((e) => e.boxId === boxId && e.until === res.body.until));
  return res.body as { boxId: number; until: string; note: string | null };
}

async function endMaintenance(boxId: number) {
  const res = await call(s.technician, 'delete', `/api/v1/boxes/${boxId}/maintenance`);
  expectStatus(res, 204);
  await waitFor(() => maintenanceEvents.some((e) => e.boxId === boxId && e.until === null));
}

beforeAll(async () => {
  srv = await startTelemetryServer();
  record(srv);
  const first = await newBox();
  s = await signInRoles(srv, first.customer.id);
});
afterAll(async () => {
  for (const b of boxes) await b.client.endAsync();
  await srv.stop();
});

describe('POST /api/v1/boxes/:id/maintenance', () => {
  let box: TestBox;
  let alarmId: number;
  let until: string;

  it('suppresses the open alarm of the box with a transition naming the technician and the note', async () => {
    box = boxes[0] as TestBox;
    // 8 °C against the test box's 5 °C high limit for 15 min, alarm delay 10 min (settings of the test box).
    await holdAbove(box, 8, 15);
    alarmId = (await waitForAlarm(srv, box.box.id, 'box-air-high')).id;
    await waitFor(async () => (await stateOf(alarmId)) === 'unacknowledged');
    const started = await startMaintenance(box.box.id, 60, 'coil cleaning on site');
    until = started.until;
    expect(await stateOf(alarmId)).toBe('suppressed');
    const rows = await srv.ctx.models.AlarmTransition.findAll({ where: { alarmId, action: 'suppress' } });
    expect(rows.map((r) => [r.fromState, r.toState, r.userId, r.note])).toEqual([['unacknowledged', 'suppressed', s.technician.userId, 'coil cleaning on site']]);
    expect(alarmEvents.some((a) => a.id === alarmId && a.state === 'suppressed')).toBe(true);
    const stored = await srv.ctx.models.Alarm.findByPk(alarmId);
    expect(stored?.nextEscalationAt).toBeNull();
  });

  it('reports the window end as maintenanceUntil in the fleet status and on the box', async () => {
    const fleet = await call(s.technician, 'get', '/api/v1/fleet/status');
    expectStatus(fleet, 200);
    const item = fleet.body.find((b: { boxId: number }) => b.boxId === box.box.id);
    expect(item.maintenanceUntil).toBe(until);
    const dto = await call(s.technician, 'get', `/api/v1/boxes/${box.box.id}`);
    expectStatus(dto, 200);
    expect(dto.body.maintenanceUntil).toBe(until);
    const list = await call(s.technician, 'get', `/api/v1/boxes?customerId=${box.customer.id}`);
    expect(list.body.items.map((b: { id: number; maintenanceUntil: string | null }) => [b.id, b.maintenanceUntil])).toEqual([[box.box.id, until]]);
  });

  it('ends with the alarm back to unacknowledged when the condition is still active, and maintenanceUntil null', async () => {
    await endMaintenance(box.box.id);
    expect(await stateOf(alarmId)).toBe('unacknowledged');
    const rows = await srv.ctx.models.AlarmTransition.findAll({ where: { alarmId, action: 'unsuppress' } });
    expect(rows.map((r) => [r.fromState, r.toState, r.userId])).toEqual([['suppressed', 'unacknowledged', s.technician.userId]]);
    const stored = await srv.ctx.models.Alarm.findByPk(alarmId);
    expect(stored?.escalationStep).toBe(-1);
    expect(stored?.nextEscalationAt).not.toBeNull();
    const dto = await call(s.technician, 'get', `/api/v1/boxes/${box.box.id}`);
    expect(dto.body.maintenanceUntil).toBeNull();
    const fleet = await call(s.technician, 'get', '/api/v1/fleet/status');
    expect(fleet.body.find((b: { boxId: number }) => b.boxId === box.box.id).maintenanceUntil).toBeNull();
  });
});

describe('readings during maintenance', () => {
  it('raise no alarm for a box in maintenance even when the box air stays above the high limit past the delay', async () => {
    const b = await newBox();
    await startMaintenance(b.box.id, 30);
    // 9 °C against a 5 °C high limit for 20 min, twice the 10-min alarm delay (settings of the test box).
    await holdAbove(b, 9, 20);
    await processed(b, 21);
    expect(srv.alarms?.activeRules(b.box.id)).not.toContain('box-air-high');
    expect(await srv.ctx.models.Alarm.count({ where: { boxId: b.box.id } })).toBe(0);
  });

  it('returns a suppressed alarm to normal at the end when its condition cleared meanwhile', async () => {
    const b = await newBox();
    // 8 °C for 20 min of reading time (40 → 20 min ago) against a 5 °C limit, delay 10 min (test box settings).
    await publishBetween(b, 8, 40, 20);
    const alarm = await waitForAlarm(srv, b.box.id, 'box-air-high');
    await startMaintenance(b.box.id, 60);
    expect(await stateOf(alarm.id)).toBe('suppressed');
    // 2 °C (the setpoint) for 19 min, past the 5-min clear delay and the 1 K deadband (shared/rules/defaults.ts, common practice).
    await publishBetween(b, 2, 19, 0);
    await waitFor(async () => (await srv.ctx.models.Alarm.findByPk(alarm.id))?.conditionActive === false);
    expect(await stateOf(alarm.id)).toBe('suppressed');
    await endMaintenance(b.box.id);
    expect(await stateOf(alarm.id)).toBe('normal');
    const rows = await srv.ctx.models.AlarmTransition.findAll({ where: { alarmId: alarm.id, action: 'unsuppress' } });
    expect(rows.map((r) => [r.fromState, r.toState])).toEqual([['suppressed', 'normal']]);
  });
});

describe('a maintenance window that runs out', () => {
  it('is ended by the service timer: the row goes, the alarm is unsuppressed with a note and no user', async () => {
    const b = await newBox();
    await holdAbove(b, 8, 15);
    const alarm = await waitForAlarm(srv, b.box.id, 'box-air-high');
    await startMaintenance(b.box.id, 15);
    expect(await stateOf(alarm.id)).toBe('suppressed');
    // Make the window already over instead of waiting 15 minutes.
    await srv.ctx.models.BoxMaintenance.update({ untilAt: new Date(Date.now() - 1000) }, { where: { boxId: b.box.id } });
    await srv.alarms?.tick(Date.now(), [b.box.id]);
    await waitFor(async () => (await stateOf(alarm.id)) === 'unacknowledged');
    expect(await srv.ctx.models.BoxMaintenance.findByPk(b.box.id)).toBeNull();
    const rows = await srv.ctx.models.AlarmTransition.findAll({ where: { alarmId: alarm.id, action: 'unsuppress' } });
    expect(rows.map((r) => [r.toState, r.userId, r.note])).toEqual([['unacknowledged', null, 'maintenance window ran out']]);
  });
});

describe('the live socket', () => {
  it('tells the technician when a box enters and leaves maintenance, and not a manager of another customer', async () => {
    const b = await newBox();
    const tech = await openSocket(s.technician);
    const mgr = await openSocket(s.manager);
    const started = await startMaintenance(b.box.id, 30);
    await waitFor(() => tech.events.some((e) => e.type === 'maintenance' && e.boxId === b.box.id && e.until === started.until));
    await endMaintenance(b.box.id);
    await waitFor(() => tech.events.some((e) => e.type === 'maintenance' && e.boxId === b.box.id && e.until === null));
    expect(mgr.events.some((e) => e.type === 'maintenance' && e.boxId === b.box.id)).toBe(false);
    tech.ws.close();
    mgr.ws.close();
  });
});

describe('a server restart during maintenance', () => {
  it('keeps the box in maintenance: the alarm stays suppressed and new readings above the limit raise nothing', async () => {
    const b = await newBox();
    const held = await newBox();
    await holdAbove(held, 8, 15);
    const alarm = await waitForAlarm(srv, held.box.id, 'box-air-high');
    const started = await startMaintenance(held.box.id, 60);
    await startMaintenance(b.box.id, 60);
    for (const x of boxes) await x.client.endAsync();
    await srv.stop();
    srv = await startTelemetryServer();
    record(srv);
    s = await signInRoles(srv, b.customer.id);
    for (const x of boxes) x.client = await connectController(srv.mqttUrl ?? '', x.serial, x.secret);
    expect(await stateOf(alarm.id)).toBe('suppressed');
    // 9 °C against a 5 °C high limit for 20 min, twice the 10-min delay (test box settings).
    await holdAbove(b, 9, 20);
    await processed(b, 21);
    expect(await srv.ctx.models.Alarm.count({ where: { boxId: b.box.id } })).toBe(0);
    const dto = await call(s.technician, 'get', `/api/v1/boxes/${held.box.id}`);
    expect(dto.body.maintenanceUntil).toBe(started.until);
  });
});
