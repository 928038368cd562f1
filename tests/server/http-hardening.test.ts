/**
 * HTTP hardening: secrets kept out of the access log, the app served from any install path,
 * client errors answered as 4xx problems, capped chart answers, and sign-in that neither grows
 * the session table for strangers nor tells which addresses exist.
 */
import http from 'node:http';
import net from 'node:net';
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { gzipSync } from 'node:zlib';
import bcrypt from 'bcryptjs';
import express from 'express';
import request from 'supertest';
import { QueryTypes } from 'sequelize';
import { afterAll, afterEach, beforeAll, describe, expect, it, vi } from 'vitest';
import type { RunningServer } from '../../server/main';
import { createApp } from '../../server/app';
import { createLogger } from '../../server/logger';
import { errorMiddleware } from '../../server/http/problem';
import { SettingsService } from '../../server/telemetry/settings';
import { chooseResolution, MAX_READING_POINTS } from '../../server/telemetry/queries';
import { ANONYMOUS_SESSION_MINUTES } from '../../server/http/session';
import { factories, signIn, startTestServer } from './helpers/app';

const DAY_MS = 86_400_000;
const INDEX_HTML = '<!doctype html><title>rimehold test shell</title><div id="app">client shell</div>';

let srv: RunningServer;
let f: ReturnType<typeof factories>;
let tmpBase: string;
/** A client build in a directory whose path has a dot folder and a space in it. */
let clientDir: string;
/** The app built on srv's context with the captured logger and the client dir above. */
let shell: http.Server;
let logLines: string[] = [];

beforeAll(async () => {
  srv = await startTestServer();
  f = factories(srv);
  tmpBase = mkdtempSync(path.join(os.tmpdir(), 'rimehold-'));
  clientDir = path.join(tmpBase, '.dot dir', 'p', 'dist', 'client');
  mkdirSync(path.join(clientDir, 'assets'), { recursive: true });
  writeFileSync(path.join(clientDir, 'index.html'), INDEX_HTML);
  writeFileSync(path.join(clientDir, 'assets', 'app-1234.js'), 'console.log("rimehold");');
  const logger = createLogger('info', 'hardening-test', { write: (line: string) => void logLines.push(line) });
  const { app } = createApp({ ...srv.ctx, logger }, new SettingsService(srv.ctx), { clientDir });
  shell = http.createServer(app);
  await new Promise<void>((resolve) => shell.listen(0, '127.0.0.1', resolve));
});
afterAll(async () => {
  await new Promise<void>((resolve) => shell.close(() => resolve()));
  await srv.stop();
  rmSync(tmpBase, { recursive: true, force: true });
});
afterEach(() => {
  vi.restoreAllMocks();
});

/** Sends raw bytes to a server and answers the status line and the whole response text. */
function rawRequest(server: http.Server, text: string): Promise<{ statusLine: string; response: string }> {
  const address = server.address();
  if (!address || typeof address === 'string') throw new Error('server not listening');
  return new Promise((resolve, reject) => {
    const socket = net.connect(address.port, '127.0.0.1', () => socket.write(text));
    let response = '';
    socket.setEncoding('utf8');
    socket.on('data', (chunk: string) => {
      response += chunk;
    });
    socket.on('error', reject);
    socket.on('end', () => resolve({ statusLine: response.split('\r\n')[0] ?? '', response }));
  });
}

describe('access log', () => {
  it('keeps the set-password token of an invitation link out of the log lines', async () => {
    logLines = [];
    const token = 'Inv1tat1onT0kenShouldNeverBeLogged';
    await request(shell).get(`/set-password?token=${token}`).expect(200);
    const me = await request(shell).get(`/api/v1/auth/me?token=${token}&page=2`).expect(401);
    const logged = logLines.join('');
    expect(logged).toContain('/set-password');
    expect(logged).toContain('/api/v1/auth/me');
    expect(logged).not.toContain(token);
    expect(JSON.stringify(me.body)).not.toContain(token);
  });
});

describe('serving the client from an install path with a dot folder and a space', () => {
  it('answers the app for / and for client routes', async () => {
    expect(clientDir).toMatch(/\/\.dot dir\//);
    for (const route of ['/', '/boxes/12', '/admin/users']) {
      const res = await request(shell).get(route);
      expect(res.status, route).toBe(200);
      expect(res.text).toContain('client shell');
    }
  });

  it('serves an existing asset and answers 404 for a missing asset or file', async () => {
    const asset = await request(shell).get('/assets/app-1234.js').expect(200);
    expect(asset.text).toContain('rimehold');
    for (const missing of ['/assets/app-9999.js', '/assets/logo', '/robots.txt', '/boxes/favicon.png']) {
      const res = await request(shell).get(missing);
      expect(res.status, missing).toBe(404);
      expect(res.text).not.toContain('client shell');
    }
  });

  it('still answers unknown API paths with the API 404 problem, not the app', async () => {
    const res = await request(shell).get('/api/v1/no-such-thing').expect(404);
    expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
    expect(res.body.type).toMatch(/no-route$/);
  });
});

describe('client errors raised by middleware', () => {
  it('answers a body that claims gzip but is not with a 400 problem', async () => {
    const res = await request(srv.server).post('/api/v1/auth/login').set('content-type', 'application/json').set('content-encoding', 'gzip').send('{"email":"a@example.com"}');
    expect(res.status).toBe(400);
    expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
    expect(res.body.type).toMatch(/bad-encoding$/);
  });

  it('still decodes a real gzip body (it reaches the CSRF check, not a decoding error)', async () => {
    // Sent with node:http: superagent would JSON-encode a Buffer body.
    const port = (srv.server.address() as net.AddressInfo).port;
    const body = gzipSync(Buffer.from(JSON.stringify({ email: 'a@example.com', password: 'x' })));
    const res = await new Promise<{ status: number; body: { type?: string } }>((resolve, reject) => {
      const req = http.request({ host: '127.0.0.1', port, method: 'POST', path: '/api/v1/auth/login', headers: { 'content-type': 'application/json', 'content-encoding': 'gzip', 'content-length': body.length } }, (answer) => {
        let text = '';
        answer.setEncoding('utf8');
        answer.on('data', (chunk: string) => (text += chunk));
        answer.on('end', () => resolve({ status: answer.statusCode ?? 0, body: JSON.parse(text) as { type?: string } }));
      });
      req.on('error', reject);
      req.end(body);
    });
    expect(res.status, JSON.stringify(res.body)).toBe(403);
    expect(res.body.type).toMatch(/csrf$/);
  });

  it('answers an unsupported Content-Encoding such as br with a 415 problem', async () => {
    for (const encoding of ['br', 'compress']) {
      const res = await request(srv.server).post('/api/v1/auth/login').set('content-type', 'application/json').set('content-encoding', encoding).send('{}');
      expect(res.status, encoding).toBe(415);
      expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
      expect(res.body.detail).toMatch(/gzip/);
    }
  });

  it('answers a malformed percent-encoding in the path with a 400 problem', async () => {
    for (const server of [srv.server, shell]) {
      for (const target of ['/%c0%ae%c0%ae/etc/passwd', '/api/v1/boxes/%E0%A4%A/readings', '/assets/%ff.js']) {
        const res = await request(server).get(target);
        expect(res.status, target).toBe(400);
        expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
        expect(res.text).not.toMatch(/at .*\.[jt]s:\d+/);
      }
    }
  });

  it('answers an absolute-form request target naming another host with a 400 problem', async () => {
    for (const server of [srv.server, shell]) {
      const port = (server.address() as net.AddressInfo).port;
      for (const host of ['evil.example', `127.0.0.1:${port}`]) {
        const { statusLine, response } = await rawRequest(server, `GET http://evil.example/ HTTP/1.1\r\nHost: ${host}\r\nConnection: close\r\n\r\n`);
        expect(statusLine).toBe('HTTP/1.1 400 Bad Request');
        expect(response).toMatch(/application\/problem\+json/);
        expect(response).not.toContain('client shell');
      }
    }
  });

  it('keeps 500 for our own faults, even one that carries a 5xx status, and honours any 4xx status', async () => {
    const app = express();
    app.get('/plain', () => {
      throw new Error('database went away');
    });
    app.get('/upstream', () => {
      throw Object.assign(new Error('gateway'), { status: 502 });
    });
    app.get('/range', () => {
      throw Object.assign(new Error('Range Not Satisfiable'), { statusCode: 416, expose: true });
    });
    app.use(errorMiddleware(createLogger('silent')));
    for (const route of ['/plain', '/upstream']) {
      const res = await request(app).get(route);
      expect(res.status, route).toBe(500);
      expect(res.body.type).toMatch(/internal$/);
      expect(res.text).not.toContain('database went away');
    }
    const range = await request(app).get('/range');
    expect(range.status).toBe(416);
    expect(range.headers['content-type']).toMatch(/application\/problem\+json/);
  });
});

describe('GET /api/v1/boxes/:id/readings point cap', () => {
  async function boxAgent() {
    const customer = await f.customer();
    const site = await f.site(customer.id);
    const box = await f.box(site.id, customer.id);
    const { email, password } = await f.user('manager', customer.id);
    const { agent } = await signIn(srv, email, password);
    return { agent, boxId: box.id };
  }

  it('refuses one-minute buckets over 400 days with a 422 problem naming the resolution to use', async () => {
    const { agent, boxId } = await boxAgent();
    const to = new Date();
    const from = new Date(to.getTime() - 400 * DAY_MS);
    const res = await agent.get(`/api/v1/boxes/${boxId}/readings`).query({ from: from.toISOString(), to: to.toISOString(), resolution: '1m' });
    expect(res.status).toBe(422);
    expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
    expect(res.body.type).toMatch(/too-many-points$/);
    expect(res.body.detail).toMatch(/resolution=1h/);
    expect(res.body.errors.resolution[0]).toMatch(/1h/);
  });

  it('picks hourly buckets by itself for 400 days (auto stays within the cap)', async () => {
    const { agent, boxId } = await boxAgent();
    const to = new Date();
    const from = new Date(to.getTime() - 400 * DAY_MS);
    const res = await agent.get(`/api/v1/boxes/${boxId}/readings`).query({ from: from.toISOString(), to: to.toISOString() }).expect(200);
    expect(res.body.resolution).toBe('1h');
  });

  it('refuses raw readings over two days and names one-minute buckets instead', async () => {
    const { agent, boxId } = await boxAgent();
    const to = new Date();
    const res = await agent.get(`/api/v1/boxes/${boxId}/readings`).query({ from: new Date(to.getTime() - 2 * DAY_MS).toISOString(), to: to.toISOString(), resolution: 'raw' });
    expect(res.status).toBe(422);
    expect(res.body.detail).toMatch(/resolution=1m/);
  });

  it('answers an explicit resolution that fits the cap', async () => {
    const { agent, boxId } = await boxAgent();
    const to = new Date();
    const res = await agent.get(`/api/v1/boxes/${boxId}/readings`).query({ from: new Date(to.getTime() - 3 * DAY_MS).toISOString(), to: to.toISOString(), resolution: '1m' });
    expect(res.status).toBe(200);
    expect(res.body.resolution).toBe('1m');
  });

  it('answers a short span holding more raw readings than the cap in 1m buckets, and refuses it as raw', async () => {
    const { agent, boxId } = await boxAgent();
    const to = new Date();
    // One reading a second for MAX_READING_POINTS + 1 seconds (~2.8 h): a controller far faster than the demo's.
    await srv.ctx.sequelize.query(
      `INSERT INTO readings (box_id, ts, seq, received_at, refrigerant, box_air_c, suction_kpa_g, suction_line_c, compressor_on, fan_on, defrost_on, door_open)
       SELECT ?, ? - INTERVAL seq SECOND, seq + 1, ?, 'R-448A', 2, 300, 5, 1, 1, 0, 0 FROM seq_1_to_${MAX_READING_POINTS + 1}`,
      { replacements: [boxId, to, to] },
    );
    const range = { from: new Date(to.getTime() - 4 * 3_600_000).toISOString(), to: to.toISOString() };
    const auto = await agent.get(`/api/v1/boxes/${boxId}/readings`).query(range).expect(200);
    expect(auto.body.resolution).toBe('1m');
    const raw = await agent.get(`/api/v1/boxes/${boxId}/readings`).query({ ...range, resolution: 'raw' });
    expect(raw.status).toBe(422);
    expect(raw.body.detail).toMatch(/resolution=1m/);
  });

  it('caps every bucketed choice at MAX_READING_POINTS points', () => {
    const to = new Date('2026-12-01T00:00:00Z');
    // 10,000 one-minute buckets fit; 10,001 do not.
    expect(chooseResolution('1m', new Date(to.getTime() - MAX_READING_POINTS * 60_000), to)).toBe('1m');
    expect(() => chooseResolution('1m', new Date(to.getTime() - (MAX_READING_POINTS + 1) * 60_000), to)).toThrow(/resolution=15m/);
    expect(() => chooseResolution('15m', new Date(to.getTime() - 200 * DAY_MS), to)).toThrow(/resolution=1h/);
    for (const days of [1, 7, 31, 90, 400]) expect(() => chooseResolution('auto', new Date(to.getTime() - days * DAY_MS), to)).not.toThrow();
  });
});

/** The stored expiry of the session behind a `sid` cookie (signed `s:<sid>.<signature>`). */
async function storedExpiryMs(res: request.Response): Promise<number> {
  const cookie = ([] as string[]).concat(res.headers['set-cookie'] ?? []).find((c) => c.startsWith('sid='));
  if (!cookie) throw new Error('no sid cookie');
  const signed = decodeURIComponent(cookie.slice(4).split(';')[0] ?? '');
  const sid = signed.slice(2, signed.lastIndexOf('.'));
  const rows = await srv.ctx.sequelize.query<{ expires: Date }>('SELECT expires FROM sessions WHERE sid = ?', { replacements: [sid], type: QueryTypes.SELECT });
  if (!rows[0]) throw new Error('no session row');
  return new Date(rows[0].expires).getTime();
}

/** Rows in the sessions table. */
async function sessionRows(): Promise<number> {
  const rows = await srv.ctx.sequelize.query<{ n: number }>('SELECT COUNT(*) AS n FROM sessions', { type: QueryTypes.SELECT });
  return Number(rows[0]?.n ?? 0);
}

describe('sessions before sign-in', () => {
  it(`stores an anonymous CSRF session that expires within ${ANONYMOUS_SESSION_MINUTES} minutes, and a full one after sign-in`, async () => {
    const { email, password } = await f.user('technician');
    const agent = request.agent(srv.server);
    const pre = await agent.get('/api/v1/auth/csrf').expect(200);
    const anonymousLeftMs = (await storedExpiryMs(pre)) - Date.now();
    expect(anonymousLeftMs).toBeGreaterThan(0);
    expect(anonymousLeftMs).toBeLessThanOrEqual(ANONYMOUS_SESSION_MINUTES * 60_000 + 2_000);
    const login = await agent.post('/api/v1/auth/login').set('x-csrf-token', pre.body.csrfToken).send({ email, password }).expect(200);
    const signedInLeftMs = (await storedExpiryMs(login)) - Date.now();
    expect(signedInLeftMs).toBeGreaterThan(srv.ctx.config.SESSION_MAX_AGE_H * 3_600_000 - 60_000);
  });

  it('adds one short-lived row for a client that keeps its cookie, however often it asks', async () => {
    const before = await sessionRows();
    const agent = request.agent(srv.server);
    for (let i = 0; i < 20; i++) await agent.get('/api/v1/auth/csrf').expect(200);
    expect((await sessionRows()) - before).toBe(1);
  });
});

describe('sign-in answers that reveal nothing', () => {
  async function attempt(email: string, password: string) {
    const agent = request.agent(srv.server);
    const { body } = await agent.get('/api/v1/auth/csrf');
    return agent.post('/api/v1/auth/login').set('x-csrf-token', body.csrfToken).send({ email, password });
  }

  it('answers a locked account (right password), an unknown address and a wrong password alike', async () => {
    const locked = await f.user('technician');
    await locked.user.update({ lockedUntil: new Date(Date.now() + 10 * 60_000) });
    const known = await f.user('technician');
    const answers = [await attempt(locked.email, locked.password), await attempt('nobody-here@test.example.com', 'some password'), await attempt(known.email, 'wrong password')];
    for (const res of answers) {
      expect(res.status).toBe(401);
      expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
    }
    const bodies = answers.map((r) => ({ type: r.body.type, title: r.body.title, detail: r.body.detail }));
    expect(bodies[1]).toEqual(bodies[0]);
    expect(bodies[2]).toEqual(bodies[0]);
  });

  it('runs a bcrypt compare for an unknown address and for a locked account, as for a known one', async () => {
    const locked = await f.user('technician');
    await locked.user.update({ lockedUntil: new Date(Date.now() + 10 * 60_000) });
    const compare = vi.spyOn(bcrypt, 'compare');
    await attempt('nobody-at-all@test.example.com', 'some password');
    expect(compare).toHaveBeenCalledTimes(1);
    await attempt(locked.email, 'some password');
    expect(compare).toHaveBeenCalledTimes(2);
  });
});
