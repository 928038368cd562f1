/**
 * The simulator's faults raise their alarms end to end: simulated controllers (simulator/fleet)
 * publish over MQTT to the test server's embedded broker, on a clock 320× faster than real time
 * that starts 80 min in the past; the real ingest stores the readings and the alarm service raises.
 * The faults come on at the start of the run; tests/shared/rules.simulator.test.ts shows each
 * raising within the first hour of model time on the same box settings.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../server/main';
import type { Alarm } from '../../server/models/alarms';
import { hashDeviceSecret } from '../../server/controllers/secrets';
import { startFleet, type Fleet } from '../../simulator/fleet';
import type { FleetController } from '../../simulator/fleetFile';
import { memoryLogger } from '../../simulator/log';
import { START_MS } from '../simulator/helpers';
import type { FaultName } from '../../simulator/model/faults';
import { boxBody, factories } from './helpers/app';
import { startTelemetryServer, storedRows, waitFor } from './helpers/telemetry';

/** Simulated seconds per real second, and how far back the simulated clock starts (80 min: 15 s of wall time). */
const SPEED = 320;
const START_AGO_S = 80 * 60;

let srv: RunningServer;
let fleet: Fleet | null = null;
let simStartMs = 0;
const boxIdOf = new Map<FaultName | 'healthy', number>();

/** A box on a site at sea level with the test box settings (boxBody) and a controller with a fixed serial (fixed model seed). */
async function simulatedBox(name: FaultName | 'healthy', customerId: number, siteId: number): Promise<FleetController> {
  const f = factories(srv);
  const b = await f.box(siteId, customerId);
  const serial = `SIMAL-${name}`;
  const secret = `secret-${name}-0123456789`;
  await srv.ctx.models.Controller.create({ boxId: b.id, serial, secretHash: hashDeviceSecret(secret), valveFullSteps: 1600, firmware: null, lastSeenAt: null, secretRotatedAt: null });
  boxIdOf.set(name, b.id);
  const body = boxBody(siteId);
  return {
    serial, secret, boxId: b.id, kind: body.kind, valveType: body.valveType, refrigerant: body.refrigerant as FleetController['refrigerant'],
    setpointC: body.setpointC, differentialK: body.differentialK, superheatTargetK: body.superheatTargetK, valveFullSteps: 1600, elevationM: 0,
    defrostType: body.defrostType, defrostIntervalH: body.defrostIntervalH, defrostMaxMin: body.defrostMaxMin, defrostTerminationC: body.defrostTerminationC,
    dripMin: body.dripMin, fanDelayMin: body.fanDelayMin,
  };
}

const alarmsOf = (name: FaultName | 'healthy'): Promise<Alarm[]> => srv.ctx.models.Alarm.findAll({ where: { boxId: boxIdOf.get(name) ?? 0 }, order: [['id', 'ASC']] });

beforeAll(async () => {
  srv = await startTelemetryServer();
  const f = factories(srv);
  const customer = await f.customer();
  const site = await f.site(customer.id, { elevationM: 0 });
  const faults: FaultName[] = ['low-charge', 'valve-leak-through', 'door-ajar'];
  const controllers: FleetController[] = [];
  for (const name of [...faults, 'healthy'] as const) controllers.push(await simulatedBox(name, customer.id, site.id));
  fleet = await startFleet({
    controllers,
    url: srv.mqttUrl ?? '',
    speed: SPEED,
    startAgoS: START_AGO_S,
    faults: faults.map((fault) => ({ serial: `SIMAL-${fault}`, fault })),
    faultChannel: false,
    logger: memoryLogger(),
    tickMs: 100,
    // The kitchen day as in tests/shared/rules.simulator.test.ts (t = 0 at 08:00), whatever the hour
    // this runs at: started at 00:40 UTC on the real clock's day, the low-charge box did not raise superheat-high.
    modelStartMs: START_MS,
  });
  simStartMs = fleet.clock.simStartMs;
  // Until the simulated clock has caught up (80 min / 320 ≈ 15 s) and every reading up to then is stored.
  await waitFor(() => fleet?.clock.caughtUp() ?? false, 40_000, 200);
  // 80 min of 10-s readings: 480 per box (a few may still sit in a controller's in-flight window).
  for (const id of boxIdOf.values()) {
    await waitFor(async () => (await storedRows(srv, id)).length >= 470, 20_000, 200);
    await srv.alarms?.settled(id);
  }
}, 90_000);

afterAll(async () => {
  await fleet?.stop();
  await srv?.stop();
});

describe('simulator faults through MQTT, the ingest and the alarm service', () => {
  it('raise superheat-high on the low-charge fault, on reading time after the 15-min delay', async () => {
    const a = (await alarmsOf('low-charge')).find((x) => x.ruleId === 'superheat-high');
    expect(a, 'superheat-high raised on the low-charge box').toBeDefined();
    // 15 min: superheat-high delay of shared/rules/defaults.ts (our choice), plus the 5-min pull-down ignored after a start (common practice).
    expect(a?.raisedAt.getTime() ?? 0).toBeGreaterThanOrEqual(simStartMs + 15 * 60_000);
    expect(a?.state).toBe('unacknowledged');
  });

  it('raise pump-down-failure on the valve-leak-through fault', async () => {
    const rules = (await alarmsOf('valve-leak-through')).map((x) => x.ruleId);
    expect(rules).toContain('pump-down-failure');
  });

  it('raise door-open on the door-ajar fault, no sooner than the box’s 5-min door delay', async () => {
    const a = (await alarmsOf('door-ajar')).find((x) => x.ruleId === 'door-open');
    expect(a, 'door-open raised on the door-ajar box').toBeDefined();
    // 5 min: the test box's door alarm delay (boxBody; 3–10 min is common practice).
    expect(a?.raisedAt.getTime() ?? 0).toBeGreaterThanOrEqual(simStartMs + 5 * 60_000);
  });

  it('raise none of the three on the healthy box run alongside', async () => {
    const rules = (await alarmsOf('healthy')).map((x) => x.ruleId);
    expect(rules).not.toContain('superheat-high');
    expect(rules).not.toContain('pump-down-failure');
    expect(rules).not.toContain('door-open');
    // The healthy box did report for the whole run (its readings reached the database).
    expect((await storedRows(srv, boxIdOf.get('healthy') ?? 0)).length).toBeGreaterThan(300);
  });
});
