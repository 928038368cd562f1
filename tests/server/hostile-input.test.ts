/**
 * A bounded hostile-input run against the whole server (HTTP, MQTT broker, WebSocket): every door
 * gets malformed, oversize, foreign, forged and injected input, and must answer with a client error
 * (never 5xx), stay up, and keep serving a legitimate controller and user afterwards.
 * Bounded: a fixed number of requests and packets, each socket with a deadline.
 */
import net from 'node:net';
import zlib from 'node:zlib';
import request from 'supertest';
import WebSocket from 'ws';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../server/main';
import { topics } from '../../shared/schemas/telemetry';
import { factories, signIn } from './helpers/app';
import { connectController, provisionBox, publishTelemetry, reading, startTelemetryServer, storedRows, waitFor } from './helpers/telemetry';

let srv: RunningServer;
const statuses: Array<{ what: string; status: number }> = [];

beforeAll(async () => {
  srv = await startTelemetryServer({ LOGIN_RATE_LIMIT: '10' });
});
afterAll(async () => srv.stop());

/** Resolves the promise's outcome, or 'timeout' after ms: a hostile step never hangs the run. */
function bounded<T>(p: Promise<T>, ms = 2000): Promise<T | 'timeout'> {
  return Promise.race([p, new Promise<'timeout'>((r) => setTimeout(() => r('timeout'), ms))]);
}

function note(what: string, status: number) {
  statuses.push({ what, status });
  return status;
}

/** Sends raw bytes on a fresh TCP connection; resolves what came back (bounded by a deadline). */
function raw(port: number, bytes: Buffer | string, deadlineMs = 2000): Promise<string> {
  return new Promise((resolve) => {
    const chunks: Buffer[] = [];
    const s = net.connect(port, '127.0.0.1', () => s.write(bytes));
    const done = () => {
      s.destroy();
      resolve(Buffer.concat(chunks).toString('latin1'));
    };
    s.on('data', (d) => chunks.push(d));
    s.on('error', done);
    s.on('close', done);
    setTimeout(done, deadlineMs);
  });
}

const httpStatus = (answer: string) => Number(/^HTTP\/1\.1 (\d{3})/.exec(answer)?.[1] ?? 0);

describe('hostile HTTP input', () => {
  it('answers traversal, injection and malformed paths and queries with 4xx or the app, never 5xx', async () => {
    const paths = [
      '/../../etc/passwd',
      '/%2e%2e/%2e%2e/etc/passwd',
      '/%c0%ae%c0%ae/etc/passwd',
      '/api/v1/boxes/1%00',
      "/api/v1/boxes/1' OR '1'='1",
      "/api/v1/boxes?q=' OR '1'='1' -- ",
      '/api/v1/boxes?page=-1&pageSize=1000000000',
      '/api/v1/boxes?q=%3Cscript%3Ealert(1)%3C/script%3E',
      '/api/v1/boxes/99999999999999999999999',
      '/api/v1/boxes/1/readings?from=yesterday&to=now',
      '/api/v1/%ff%fe',
      '/assets/../../server/config.ts',
      '/metrics?x=%zz',
    ];
    for (const p of paths) {
      const res = await request(srv.server).get(p);
      expect(note(`GET ${p}`, res.status), p).toBeLessThan(500);
    }
  });

  it('refuses bad bodies and encodings with a problem, never 5xx', async () => {
    const agent = request.agent(srv.server);
    const { body } = await agent.get('/api/v1/auth/csrf');
    const token = body.csrfToken as string;
    const send = async (what: string, req: request.Test) => {
      const res = await req;
      expect(note(what, res.status), what).toBeGreaterThanOrEqual(400);
      expect(res.status, what).toBeLessThan(500);
    };
    await send('invalid JSON', agent.post('/api/v1/auth/login').set('x-csrf-token', token).set('Content-Type', 'application/json').send('{"email":'));
    await send('array body', agent.post('/api/v1/auth/login').set('x-csrf-token', token).send([1, 2, 3]));
    await send('oversize body', agent.post('/api/v1/auth/login').set('x-csrf-token', token).set('Content-Type', 'application/json').send(`{"email":"${'a'.repeat(1_000_000)}"}`));
    await send('deep JSON', agent.post('/api/v1/auth/login').set('x-csrf-token', token).set('Content-Type', 'application/json').send(`${'['.repeat(5000)}${']'.repeat(5000)}`));
    await send('SQL in e-mail', agent.post('/api/v1/auth/login').set('x-csrf-token', token).send({ email: "x' OR '1'='1", password: "' OR 1=1 --" }));
    await send('wrong types', agent.post('/api/v1/auth/login').set('x-csrf-token', token).send({ email: { $gt: '' }, password: ['a'] }));
    await send('gzip that is not gzip', agent.post('/api/v1/auth/login').set('x-csrf-token', token).set('Content-Type', 'application/json').set('Content-Encoding', 'gzip').send('not gzip at all'));
    await send('br encoding', agent.post('/api/v1/auth/login').set('x-csrf-token', token).set('Content-Type', 'application/json').set('Content-Encoding', 'br').send('{}'));
    await send('gzip bomb-ish body', agent.post('/api/v1/auth/login').set('x-csrf-token', token).set('Content-Type', 'application/json').set('Content-Encoding', 'gzip').send(zlib.gzipSync(Buffer.alloc(2_000_000, 0x20))));
    await send('text/plain body', agent.post('/api/v1/auth/login').set('x-csrf-token', token).set('Content-Type', 'text/plain').send('email=a&password=b'));
  });

  it('refuses CSRF-less writes and forged cookies', async () => {
    const { email, password } = await factories(srv).user('admin');
    const { agent } = await signIn(srv, email, password);
    const before = await srv.ctx.models.Customer.count();
    const res = await agent.post('/api/v1/customers').send({ name: 'No token Ltd' });
    expect(note('CSRF-less write', res.status)).toBe(403);
    expect(await srv.ctx.models.Customer.count()).toBe(before);
    const forged = await request(srv.server).get('/api/v1/auth/me').set('Cookie', 'sid=s%3Aforged-session-id.invalidsignature');
    expect(note('forged cookie', forged.status)).toBe(401);
    const garbage = await request(srv.server).get('/api/v1/auth/me').set('Cookie', 'sid=%%%; sid=s%3A; sid=s:a.b.c');
    expect(note('garbage cookie', garbage.status)).toBeLessThan(500);
  });

  it('answers raw protocol abuse (absolute-form target, oversize headers, garbage) with 4xx or a close', async () => {
    const port = srv.port;
    expect(note('absolute-form', httpStatus(await raw(port, 'GET http://elsewhere.example/ HTTP/1.1\r\nHost: elsewhere.example\r\n\r\n')))).toBeLessThan(500);
    const big = await raw(port, `GET /api/v1/health HTTP/1.1\r\nHost: 127.0.0.1\r\nX-Big: ${'a'.repeat(70_000)}\r\n\r\n`);
    const bigStatus = httpStatus(big);
    expect(bigStatus === 0 || (bigStatus >= 400 && bigStatus < 500)).toBe(true);
    const junk = httpStatus(await raw(port, Buffer.from([0x16, 0x03, 0x01, 0x00, 0xff, 0x01, 0x00, 0x00])));
    expect(junk === 0 || (junk >= 400 && junk < 500)).toBe(true);
  });
});

describe('hostile MQTT input', () => {
  it('survives garbage, bad credentials, foreign topics and bad payloads, and still stores a good reading', async () => {
    const mqttPort = Number(new URL(srv.mqttUrl ?? 'mqtt://127.0.0.1:0').port);
    // Random bytes, a CONNECT with a bad protocol name, a truncated CONNECT.
    await raw(mqttPort, Buffer.from('totally not mqtt\r\n\r\n'), 500);
    await raw(mqttPort, Buffer.from([0x10, 0x0c, 0x00, 0x04, 0x58, 0x58, 0x58, 0x58, 0x04, 0x02, 0x00, 0x3c, 0x00, 0x00]), 500);
    await raw(mqttPort, Buffer.from([0x10, 0xff, 0xff, 0xff, 0x7f, 0x00]), 500);
    const p = await provisionBox(srv);
    const other = await provisionBox(srv);
    for (const [user, secret] of [[p.serial, 'wrong secret'], [`${p.serial}' OR '1'='1`, p.secret], ['', ''], ['x'.repeat(300), 'y']] as const) {
      const outcome = await bounded(connectController(srv.mqttUrl ?? '', user, secret).then((c) => (c.end(true), 'connected'), () => 'refused'));
      expect(outcome, `CONNECT as ${user.slice(0, 20)}`).not.toBe('connected');
    }
    const c = await connectController(srv.mqttUrl ?? '', p.serial, p.secret);
    c.on('error', () => undefined);
    for (const bad of ['not json', '{"seq":"x"}', JSON.stringify({ ...reading(), extra: 1 }), JSON.stringify(reading({ boxAirC: 1e9 })), '{"__proto__":{"polluted":1}}']) {
      await bounded(publishTelemetry(c, p.serial, bad).catch(() => undefined));
    }
    // A foreign topic: the broker drops the connection (ACL), the server stays up.
    await bounded(c.publishAsync(topics.telemetry(other.serial), JSON.stringify(reading()), { qos: 1 }).catch(() => undefined));
    c.end(true);
    const good = await connectController(srv.mqttUrl ?? '', p.serial, p.secret);
    await publishTelemetry(good, p.serial, reading({ boxAirC: 3.1 }));
    const rows = await waitFor(async () => {
      const r = await storedRows(srv, p.box.id);
      return r.length > 0 ? r : null;
    });
    expect(rows).toHaveLength(1);
    expect(await storedRows(srv, other.box.id)).toHaveLength(0);
    expect(({} as Record<string, unknown>).polluted).toBeUndefined();
    good.end(true);
  });
});

describe('hostile WebSocket input', () => {
  it('refuses an anonymous upgrade, drops garbage and oversize frames, and keeps serving', async () => {
    const anon = await new Promise<number>((resolve) => {
      const ws = new WebSocket(`${srv.url.replace('http', 'ws')}/ws`);
      ws.once('unexpected-response', (_req, res) => resolve(res.statusCode ?? 0));
      ws.once('error', () => resolve(0));
    });
    expect(note('anonymous upgrade', anon)).toBe(401);
    const { email, password } = await factories(srv).user('technician');
    const { agent } = await signIn(srv, email, password);
    const cookie = agent.jar.getCookies({ domain: '127.0.0.1', path: '/', secure: false, script: false }).find((x) => x.name === 'sid');
    const ws = new WebSocket(`${srv.url.replace('http', 'ws')}/ws`, { headers: { Cookie: `sid=${cookie?.value ?? ''}`, Origin: srv.url } });
    await new Promise((resolve, reject) => {
      ws.once('open', resolve);
      ws.once('error', reject);
    });
    ws.on('error', () => undefined);
    for (let i = 0; i < 500; i++) ws.send(i % 2 ? '{"type":"resync"' : Buffer.from([0xff, 0x00, i & 0xff]));
    const closed = new Promise<number>((resolve) => ws.once('close', (code) => resolve(code)));
    ws.send('x'.repeat(100_000));
    // 1009: message too big (RFC 6455 §7.4.1).
    expect(await closed).toBe(1009);
  });
});

describe('after the run', () => {
  it('answers a sign-in burst with a valid CSRF token with 401 then 429, never 5xx', async () => {
    const agent = request.agent(srv.server);
    const { body } = await agent.get('/api/v1/auth/csrf');
    const seen = new Set<number>();
    for (let i = 0; i < 25; i++) {
      const res = await agent.post('/api/v1/auth/login').set('x-csrf-token', body.csrfToken).send({ email: `burst${i}@test.example.com`, password: 'wrong password' });
      seen.add(note('sign-in burst', res.status));
    }
    expect([...seen].every((s) => s === 401 || s === 429)).toBe(true);
    expect(seen.has(429)).toBe(true);
  });

  it('saw no 5xx anywhere and the server still answers its health check', async () => {
    expect(statuses.filter((s) => s.status >= 500)).toEqual([]);
    const res = await request(srv.server).get('/api/v1/health');
    expect(res.status).toBe(200);
  });
});
