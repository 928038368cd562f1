/** GET /api/v1/fleet/status for a large fleet: the site's time zone in each row, one statement whatever the fleet size, keyed joins only. */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { QueryTypes } from 'sequelize';
import type { RunningServer } from '../../server/main';
import type { FleetBoxStatus } from '../../shared/schemas/live';
import { fleetStatus, fleetStatusJson, fleetStatusSql } from '../../server/telemetry/queries';
import { sqlTs } from '../../server/db/sequelize';
import { factories, signIn } from './helpers/app';
import { provisionBox, startTelemetryServer } from './helpers/telemetry';

let srv: RunningServer;
let f: ReturnType<typeof factories>;

beforeAll(async () => {
  srv = await startTelemetryServer();
  f = factories(srv);
});
afterAll(async () => srv.stop());

/** SQL statements the server runs while `fn` runs that read box_latest (the fleet's latest readings). */
async function latestReadsDuring(fn: () => Promise<unknown>): Promise<number> {
  let n = 0;
  const hook = (_options: unknown, query: { sql?: string }) => {
    if (typeof query?.sql === 'string' && query.sql.includes('box_latest')) n += 1;
  };
  srv.ctx.sequelize.addHook('afterQuery', 'count-latest', hook as never);
  try {
    await fn();
  } finally {
    srv.ctx.sequelize.removeHook('afterQuery', 'count-latest');
  }
  return n;
}

describe('GET /api/v1/fleet/status', () => {
  it("gives every box its site's time zone", async () => {
    const customer = await f.customer();
    const site = await f.site(customer.id, { timeZone: 'Pacific/Auckland' });
    const box = await f.box(site.id, customer.id);
    const m = await f.user('manager', customer.id);
    const { agent } = await signIn(srv, m.email, m.password);
    const res = await agent.get('/api/v1/fleet/status').expect(200);
    const row = (res.body as FleetBoxStatus[]).find((b) => b.boxId === box.id);
    expect(row?.siteTimeZone).toBe('Pacific/Auckland');
  });

  it('reads the latest readings in one statement however many boxes there are', async () => {
    const tech = await f.user('technician');
    const { agent } = await signIn(srv, tech.email, tech.password);
    await provisionBox(srv);
    const before = await latestReadsDuring(() => agent.get('/api/v1/fleet/status').expect(200));
    for (let i = 0; i < 5; i++) await provisionBox(srv);
    let count = 0;
    const after = await latestReadsDuring(async () => {
      count = ((await agent.get('/api/v1/fleet/status').expect(200)).body as FleetBoxStatus[]).length;
    });
    expect(count).toBeGreaterThanOrEqual(6);
    expect(before).toBe(1);
    expect(after).toBe(1);
  });

  it('joins the latest reading, the controller and the maintenance window by their keys (no scan per box)', async () => {
    await provisionBox(srv);
    const q = fleetStatusSql({ id: 1, email: 'x@example.com', name: 'x', role: 'technician', customerId: null, unitSystem: 'imperial' });
    const plan = await srv.ctx.sequelize.query<{ table: string; type: string; key: string | null }>(`EXPLAIN ${q.sql}`, { replacements: q.replacements, type: QueryTypes.SELECT });
    const byTable = new Map(plan.map((p) => [p.table, p]));
    expect(byTable.get('l')).toMatchObject({ type: 'eq_ref', key: 'PRIMARY' });
    expect(byTable.get('m')).toMatchObject({ type: 'eq_ref', key: 'PRIMARY' });
    expect(['eq_ref', 'ref']).toContain(byTable.get('ctl')?.type);
    expect(byTable.get('ctl')?.key).toBe('uq_controllers_box');
  });

  it('splices the stored latest reading into the JSON answer exactly as the parsed form gives it', async () => {
    const p = await provisionBox(srv);
    const stored = { ts: '2030-01-15T12:00:00.000Z', seq: 7, boxAirC: 2.5, suctionKPaG: 120, compressorOn: true, note: 'quotes " and \\ survive' };
    await srv.ctx.sequelize.query('INSERT INTO box_latest (box_id, ts, reading) VALUES (?, ?, ?)', { replacements: [p.box.id, sqlTs(Date.parse(stored.ts)), JSON.stringify(stored)], type: QueryTypes.INSERT });
    const admin = { id: 1, email: 'x@example.com', name: 'x', role: 'admin' as const, customerId: null, unitSystem: 'imperial' as const };
    const text = await fleetStatusJson(srv.ctx.sequelize, admin);
    const parsed = JSON.parse(text) as FleetBoxStatus[];
    expect(parsed).toEqual(await fleetStatus(srv.ctx.sequelize, admin));
    expect(parsed.find((b) => b.boxId === p.box.id)?.latest).toEqual(stored);
  });
});
