/** Starts the real server on port 0 against the test database, with factories for test data. */
import { randomUUID } from 'node:crypto';
import request from 'supertest';
import type TestAgent from 'supertest/lib/agent';
import { loadConfig, type Config } from '../../../server/config';
import { startServer, type RunningServer, type StartOptions } from '../../../server/main';
import { hashSecret } from '../../../server/auth/passwords';
import { createLogger } from '../../../server/logger';
import type { Role } from '../../../shared/domain';
import type { BoxCreateBody } from '../../../shared/schemas/boxes';

export type Agent = InstanceType<typeof TestAgent>;

/** Test config: the env from scripts/test.ts plus overrides. */
export function testConfig(overrides: Record<string, string> = {}): Config {
  return loadConfig({ ...process.env, ...overrides });
}

/** Starts the server; call stop() in afterAll. */
export async function startTestServer(overrides: Record<string, string> = {}, opts: StartOptions = {}): Promise<RunningServer> {
  return startServer(testConfig(overrides), { telemetry: false, logger: createLogger(process.env.LOG_LEVEL ?? 'silent'), ...opts });
}

const uniq = () => randomUUID().slice(0, 8);

/** Factories writing straight to the models; each value is unique per call. */
export function factories(srv: RunningServer) {
  const { models } = srv.ctx;
  return {
    async customer(name = `Test Customer ${uniq()}`) {
      return models.Customer.create({ name, contactName: null, contactEmail: null, contactPhone: null, notes: null });
    },
    async site(customerId: number, extra: { elevationM?: number; timeZone?: string } = {}) {
      return models.Site.create({ customerId, name: `Site ${uniq()}`, address: null, timeZone: extra.timeZone ?? 'America/Chicago', elevationM: extra.elevationM ?? 0 });
    },
    async box(siteId: number, customerId: number, extra: Partial<BoxCreateBody> = {}) {
      return models.Box.create({ ...boxBody(siteId), ...extra, siteId, customerId });
    },
    async user(role: Role, customerId: number | null = null, password = 'correct horse battery') {
      const email = `${role}-${uniq()}@test.example.com`;
      const u = await models.User.create({
        email,
        name: `${role} ${uniq()}`,
        role,
        customerId,
        passwordHash: await hashSecret(password),
        inviteTokenHash: null,
        inviteExpiresAt: null,
        invitedAt: null,
        lastLoginAt: null,
        lockedUntil: null,
      });
      return { user: u, email, password };
    },
  };
}

/** A valid box body for a site (a cooler on R-448A). */
export function boxBody(siteId: number): BoxCreateBody {
  return {
    siteId,
    name: `Box ${uniq()}`,
    kind: 'cooler',
    setpointC: 2,
    differentialK: 1.5,
    highLimitC: 5,
    lowLimitC: 0,
    alarmDelayMin: 45,
    doorAlarmDelayMin: 5,
    refrigerant: 'R-448A',
    valveType: 'eev',
    saturationMethod: 'pressure',
    superheatTargetK: 3.3,
    defrostType: 'off-cycle',
    defrostIntervalH: 6,
    defrostMaxMin: 40,
    defrostTerminationC: 5,
    dripMin: 2,
    fanDelayMin: 0,
  };
}

/** A cookie-keeping agent signed in as the given user; returns it with its CSRF token. */
export async function signIn(srv: RunningServer, email: string, password: string): Promise<{ agent: Agent; csrf: string }> {
  const agent = request.agent(srv.server);
  const pre = await agent.get('/api/v1/auth/csrf').expect(200);
  const res = await agent.post('/api/v1/auth/login').set('x-csrf-token', pre.body.csrfToken).send({ email, password });
  if (res.status !== 200) throw new Error(`sign-in failed: ${res.status} ${JSON.stringify(res.body)}`);
  return { agent, csrf: res.body.csrfToken as string };
}
