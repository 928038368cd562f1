/**
 * Production mode keeps the promises of the README's "Production" section: no demo people or
 * passwords, no fake SMTP, no default or example secret, and a first administrator by a one-time link.
 */
import { mkdtempSync, readFileSync, copyFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { randomBytes } from 'node:crypto';
import dotenv from 'dotenv';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadConfig, PROJECT_ROOT, PRODUCTION_SECRETS } from '../../server/config';
import type { RunningServer } from '../../server/main';
import { createFirstAdmin } from '../../server/admin/firstAdmin';
import { prepareContent } from '../../server/seed/startup';
import { DEMO_USERS } from '../../server/seed/demoData';
import { ensureEnvFile } from '../../scripts/lib/env';
import { factories, signIn, startTestServer } from './helpers/app';

const strong = () => randomBytes(24).toString('base64url');
const goodProduction = () => ({
  NODE_ENV: 'production',
  DEMO_MODE: '0',
  SMTP_FAKE: '0',
  SESSION_SECRET: strong(),
  DB_PASSWORD: strong(),
  MQTT_INGEST_PASSWORD: strong(),
  MQTT_SIM_PASSWORD: strong(),
});

describe('loadConfig in production', () => {
  it('starts with demo mode and the fake SMTP off and every secret set', () => {
    expect(loadConfig(goodProduction()).NODE_ENV).toBe('production');
  });

  it('refuses every default secret and names each one', () => {
    let message = '';
    try {
      loadConfig({ NODE_ENV: 'production' });
    } catch (err) {
      message = (err as Error).message;
    }
    expect(message).toMatch(/Refusing to start in production/);
    // The simulator's account has no fixed default: unset, each process draws a random one.
    for (const key of PRODUCTION_SECRETS.filter((k) => k !== 'MQTT_SIM_PASSWORD')) expect(message).toContain(key);
    expect(loadConfig({}).MQTT_SIM_PASSWORD).not.toBe(loadConfig({}).MQTT_SIM_PASSWORD);
  });

  it.each(PRODUCTION_SECRETS)('refuses %s left at an example value', (key) => {
    expect(() => loadConfig({ ...goodProduction(), [key]: 'GENERATED' })).toThrow(key);
    expect(() => loadConfig({ ...goodProduction(), [key]: 'change-me-please-1234' })).toThrow(key);
  });

  it('refuses demo mode', () => {
    expect(() => loadConfig({ ...goodProduction(), DEMO_MODE: '1' })).toThrow(/DEMO_MODE/);
  });

  it('refuses the fake SMTP server', () => {
    expect(() => loadConfig({ ...goodProduction(), SMTP_FAKE: '1' })).toThrow(/SMTP_FAKE/);
  });

  it('refuses .env.example as shipped, and accepts the .env that npm start generates once demo mode and the fake SMTP are off', () => {
    const example = dotenv.parse(readFileSync(path.join(PROJECT_ROOT, '.env.example')));
    expect(() => loadConfig({ ...example, NODE_ENV: 'production' })).toThrow(/SESSION_SECRET/);
    expect(() => loadConfig({ ...example, NODE_ENV: 'production', SESSION_SECRET: strong() })).toThrow(/DEMO_MODE[\s\S]*SMTP_FAKE[\s\S]*DB_PASSWORD[\s\S]*MQTT_INGEST_PASSWORD/);
    const dir = mkdtempSync(path.join(os.tmpdir(), 'rimehold-env-'));
    copyFileSync(path.join(PROJECT_ROOT, '.env.example'), path.join(dir, '.env.example'));
    expect(ensureEnvFile(dir)).toBe(true);
    const generated = dotenv.parse(readFileSync(path.join(dir, '.env')));
    expect(() => loadConfig({ ...generated, NODE_ENV: 'production', DEMO_MODE: '0', SMTP_FAKE: '0' })).not.toThrow();
  });

  it('does not refuse the defaults outside production (development keeps working out of the box)', () => {
    expect(loadConfig({ NODE_ENV: 'development' }).SESSION_SECRET).toBeTruthy();
  });
});

describe('content of a real install', () => {
  let srv: RunningServer;
  beforeAll(async () => {
    srv = await startTestServer();
  });
  afterAll(async () => srv.stop());

  it('seeds no demo account or business without demo mode', async () => {
    const { models, sequelize } = srv.ctx;
    const logs: string[] = [];
    await prepareContent({ DEMO_MODE: false, NODE_ENV: 'test' }, sequelize, models, path.join(os.tmpdir(), 'unused-fleet.json'), (l) => logs.push(l));
    expect(await models.User.count({ where: { email: DEMO_USERS.map((u) => u.email) } })).toBe(0);
    expect(logs.join('\n')).not.toMatch(/demo scenario seeded/);
  });

  it('refuses production while an enabled demo account is in the database', async () => {
    const { models, sequelize } = srv.ctx;
    const demo = DEMO_USERS[0];
    if (!demo) throw new Error('no demo user');
    const u = await factories(srv).user('admin');
    await u.user.update({ email: demo.email });
    try {
      await expect(prepareContent({ DEMO_MODE: false, NODE_ENV: 'production' }, sequelize, models, 'unused', () => undefined)).rejects.toThrow(demo.email);
      await u.user.update({ disabled: true });
      await expect(prepareContent({ DEMO_MODE: false, NODE_ENV: 'production' }, sequelize, models, 'unused', () => undefined)).resolves.toBeUndefined();
    } finally {
      await u.user.destroy();
    }
  });

  it('gives the first administrator a one-time set-password link that signs them in, and works only once', async () => {
    const email = `first-admin-${strong().slice(0, 6).toLowerCase()}@test.example.com`;
    const { link, user } = await createFirstAdmin(srv.ctx.models, srv.ctx.config.publicUrl, { email, name: 'First Admin' });
    expect(user.role).toBe('admin');
    expect(user.passwordHash).toBeNull();
    const token = new URL(link).searchParams.get('token') ?? '';
    const changed: Array<{ userId: number; changed: string[] }> = [];
    srv.ctx.bus.on('userAccessChanged', (e) => changed.push(e));
    const agent = request.agent(srv.server);
    const { body } = await agent.get('/api/v1/auth/csrf');
    await agent.post('/api/v1/auth/set-password').set('x-csrf-token', body.csrfToken).send({ token, password: 'a long new password 1' }).expect(204);
    // Live sockets opened before a password change are authorised afresh.
    expect(changed).toContainEqual({ userId: user.id, changed: ['password'] });
    const again = await agent.post('/api/v1/auth/set-password').set('x-csrf-token', body.csrfToken).send({ token, password: 'another long password' });
    expect(again.status).toBe(422);
    const { agent: signedIn } = await signIn(srv, email, 'a long new password 1');
    const me = await signedIn.get('/api/v1/auth/me').expect(200);
    expect(me.body.user.role).toBe('admin');
  });

  it('refuses to create a second account for an existing address unless asked to re-issue the link', async () => {
    const { email } = await factories(srv).user('admin');
    await expect(createFirstAdmin(srv.ctx.models, srv.ctx.config.publicUrl, { email, name: 'X' })).rejects.toThrow(/already exists/);
    const again = await createFirstAdmin(srv.ctx.models, srv.ctx.config.publicUrl, { email, name: 'X', reissue: true });
    expect(again.created).toBe(false);
    expect(again.link).toMatch(/set-password\?token=/);
  });
});
