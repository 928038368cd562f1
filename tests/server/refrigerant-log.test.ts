import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../server/main';
import type { RefrigerantLogDto } from '../../shared/schemas/refrigerantLog';
import { kgToLb, lbToKg } from '../../shared/records/leakRate';
import { factories, signIn, startTestServer } from './helpers/app';
import { call, expectProblem, expectStatus, signInRoles, type Session, type Sessions } from './helpers/roles';

let srv: RunningServer;
let as: Sessions;
let otherManager: Session;
let customerId = 0;
let siteId = 0;

beforeAll(async () => {
  srv = await startTestServer();
  const f = factories(srv);
  const customer = await f.customer();
  customerId = customer.id;
  siteId = (await f.site(customer.id)).id;
  as = await signInRoles(srv, customer.id);
  const foreign = await f.customer();
  const m = await f.user('manager', foreign.id);
  otherManager = { ...(await signIn(srv, m.email, m.password)), userId: m.user.id };
});
afterAll(async () => srv.stop());

async function newBox(refrigerant: 'R-448A' | 'R-22' = 'R-448A') {
  return factories(srv).box(siteId, customerId, { refrigerant });
}
const url = (boxId: number, tail = '') => `/api/v1/refrigerant-log/boxes/${boxId}${tail}`;
const entry = (over: Record<string, unknown> = {}) => ({ kind: 'addition', amount: 5, unit: 'lb', date: '2026-02-09', cylinderId: 'CYL-0042', reason: 'Topped up after a leak at the king valve', ...over });

describe('PUT /api/v1/refrigerant-log/boxes/:boxId/system', () => {
  it('stores the full charge in kg from pounds, with the refrigerant’s GWP and its source', async () => {
    const box = await newBox();
    const res = await call(as.technician, 'put', url(box.id, '/system'), { fullCharge: 100, unit: 'lb', applianceType: 'commercial-refrigeration', fullChargeDate: null });
    expectStatus(res, 200);
    const log = res.body as RefrigerantLogDto;
    expect(log.system?.fullChargeKg).toBeCloseTo(45.359237, 9); // 100 lb × 0.45359237 kg/lb (exact by definition)
    expect(log.refrigerant).toBe('R-448A');
    expect(log.gwp).toBe(1387); // IPCC AR4 100-yr, as shared/refrigerants states it
    expect(log.gwpSource).toMatch(/IPCC AR4/);
    expect(log.threshold).toEqual({ percent: 20, label: 'Commercial refrigeration', source: '40 CFR 82.157(c)(2)(i)' });
    expect(log.ruleHint?.regime).toBe('part-84-hfc');
    const row = await srv.ctx.models.RefrigerantSystem.findByPk(box.id);
    expect(row?.fullChargeKg).toBeCloseTo(lbToKg(100), 9);
    expect(await srv.ctx.models.AuditEntry.count({ where: { action: 'refrigerant.system.set', entityId: String(box.id) } })).toBe(1);
  });

  it('refuses a zero charge or an unknown appliance type with field errors, storing nothing', async () => {
    const box = await newBox();
    const res = await call(as.technician, 'put', url(box.id, '/system'), { fullCharge: 0, unit: 'lb', applianceType: 'cold-room' });
    expectProblem(res, 400, 'validation');
    expect(Object.keys(res.body.errors)).toEqual(expect.arrayContaining(['fullCharge', 'applianceType']));
    expect(await srv.ctx.models.RefrigerantSystem.findByPk(box.id)).toBeNull();
  });
});

describe('POST /api/v1/refrigerant-log/boxes/:boxId/entries', () => {
  it('asks for the full charge before the first entry', async () => {
    const box = await newBox();
    expectProblem(await call(as.technician, 'post', url(box.id, '/entries'), entry()), 422, 'no-full-charge');
  });

  it('puts the leak rate and the 30-day repair deadline of an addition over the threshold in the log', async () => {
    const box = await newBox();
    await call(as.technician, 'put', url(box.id, '/system'), { fullCharge: 100, unit: 'lb', applianceType: 'commercial-refrigeration' });
    expectStatus(await call(as.technician, 'post', url(box.id, '/entries'), entry()), 201);
    const res = await call(as.technician, 'post', url(box.id, '/entries'), entry({ amount: lbToKg(10), unit: 'kg', date: '2026-03-11', cylinderId: 'CYL-0043' }));
    expectStatus(res, 201);
    const log = res.body as RefrigerantLogDto;
    // 10 lb / 100 lb over 30 days (2026-02-09 → 03-11): 0.1 / (30 / 365) × 100 = 121.67 % (40 CFR 82.152, annualizing method),
    // over 20 % (40 CFR 82.157(c)(2)(i)); repair within 30 days (82.157(d)(1), from memory): 2026-04-10.
    expect(log.latest?.daysSinceLastAddition).toBe(30);
    expect(log.latest?.leakRatePercent).toBeCloseTo(121.667, 3);
    expect(log.latest?.overThreshold).toBe(true);
    expect(log.latest?.repairDueDate).toBe('2026-04-10');
    expect(log.repairDeadlineDays).toBe(30);
    expect(log.entries.map((e) => e.enteredUnit)).toEqual(['lb', 'kg']);
    expect(kgToLb(log.totals.addedKg)).toBeCloseTo(15, 9);
    expect(log.entries[1]?.technicianId).toBe(as.technician.userId);
    const rows = await srv.ctx.models.RefrigerantEntry.findAll({ where: { boxId: box.id } });
    expect(rows.map((r) => r.refrigerant)).toEqual(['R-448A', 'R-448A']);
  });

  it('keeps a recovery out of the rate and refuses one marked as an exempt addition', async () => {
    const box = await newBox('R-22');
    await call(as.admin, 'put', url(box.id, '/system'), { fullCharge: 30, unit: 'kg', applianceType: 'comfort-cooling', fullChargeDate: '2026-01-01' });
    const res = await call(as.admin, 'post', url(box.id, '/entries'), entry({ kind: 'recovery', amount: 12, unit: 'kg', reason: 'Recovered before replacing the drier' }));
    expectStatus(res, 201);
    expect((res.body as RefrigerantLogDto).events).toEqual([]);
    expect((res.body as RefrigerantLogDto).ruleHint?.regime).toBe('part-82-ods'); // R-22 is an HCFC: 40 CFR 82.157(a)
    expectProblem(await call(as.admin, 'post', url(box.id, '/entries'), entry({ kind: 'recovery', exemption: 'seasonal-variance' })), 400, 'validation');
  });

  it('refuses a date in the future and a missing cylinder id', async () => {
    const box = await newBox();
    await call(as.technician, 'put', url(box.id, '/system'), { fullCharge: 50, unit: 'lb', applianceType: 'commercial-refrigeration' });
    expectProblem(await call(as.technician, 'post', url(box.id, '/entries'), entry({ date: '2999-01-01' })), 422, 'date-in-future');
    const res = await call(as.technician, 'post', url(box.id, '/entries'), entry({ cylinderId: '' }));
    expectProblem(res, 400, 'validation');
    expect(res.body.errors.cylinderId).toBeDefined();
    expect(await srv.ctx.models.RefrigerantEntry.count({ where: { boxId: box.id } })).toBe(0);
  });
});

describe('GET /api/v1/refrigerant-log/boxes/:boxId', () => {
  it('lets the box’s manager read the log but not write it, and answers 404 to another customer', async () => {
    const box = await newBox();
    expectStatus(await call(as.manager, 'get', url(box.id)), 200);
    expectProblem(await call(as.manager, 'put', url(box.id, '/system'), { fullCharge: 10, unit: 'kg', applianceType: 'comfort-cooling' }), 403, 'forbidden');
    expectProblem(await call(as.manager, 'post', url(box.id, '/entries'), entry()), 403, 'forbidden');
    expectProblem(await call(otherManager, 'get', url(box.id)), 404, 'not-found');
    expectProblem(await call(as.anonymous, 'get', url(box.id)), 401);
  });

  it('has no leak rate before the full charge is set', async () => {
    const box = await newBox();
    const log = (await call(as.technician, 'get', url(box.id))).body as RefrigerantLogDto;
    expect(log.system).toBeNull();
    expect(log.latest).toBeNull();
    expect(log.method).toMatch(/82\.152/);
  });
});
