import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../server/main';
import { REFRIGERANT_IDS } from '../../shared/refrigerants';
import { startTestServer } from './helpers/app';
import { ROLE_NAMES, call, expectStatus, signInRoles, tenant, type RoleName, type Sessions } from './helpers/roles';

let srv: RunningServer;
let as: Sessions;

beforeAll(async () => {
  srv = await startTestServer();
  as = await signInRoles(srv, (await tenant(srv)).customer.id);
});
afterAll(async () => srv.stop());

describe('GET /api/v1/refrigerants', () => {
  it('answers every refrigerant the box schema accepts, in order, with its facts', async () => {
    const res = await call(as.technician, 'get', '/api/v1/refrigerants');
    expectStatus(res, 200);
    expect(res.body.map((r: { id: string }) => r.id)).toEqual([...REFRIGERANT_IDS]);
    for (const r of res.body) expect(r).toEqual(expect.objectContaining({ safetyClass: expect.any(String), gwp: expect.any(Number), flammable: expect.any(Boolean) }));
  });

  const expected: Record<RoleName, number> = { admin: 200, technician: 200, manager: 200, anonymous: 401 };
  for (const role of ROLE_NAMES) {
    it(`answers ${expected[role]} to ${role}`, async () => {
      expectStatus(await call(as[role], 'get', '/api/v1/refrigerants'), expected[role]);
    });
  }
});
