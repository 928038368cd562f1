/**
 * The live hub's limits, on a hub of its own (its own HTTP server and bus, a stand-in sign-in that
 * reads the user from a test header): send-buffer bound, protocol-level liveness, sockets per user,
 * closing on an access change. The session-cookie sign-in itself is covered in live.test.ts.
 */
import http from 'node:http';
import net from 'node:net';
import type { AddressInfo } from 'node:net';
import type { RequestHandler } from 'express';
import { afterEach, describe, expect, it } from 'vitest';
import WebSocket from 'ws';
import type { Role } from '../../shared/domain';
import { EventBus } from '../../server/events/bus';
import { createLogger } from '../../server/logger';
import { LIVE_CLOSE, LiveHub, type LiveLimits } from '../../server/ws/hub';

interface Rig {
  hub: LiveHub;
  bus: EventBus;
  port: number;
  stop(): Promise<void>;
}

let rigs: Rig[] = [];
afterEach(async () => {
  for (const r of rigs) await r.stop();
  rigs = [];
});

/** Stand-in for session + passport: `x-test-user: id:role:customerId` signs the upgrade in. */
const headerSignIn: RequestHandler = (req, _res, next) => {
  const raw = req.headers['x-test-user'];
  if (typeof raw === 'string') {
    const [id, role, customerId] = raw.split(':');
    req.user = { id: Number(id), email: `u${id}@test.example.com`, name: `User ${id}`, role: role as Role, customerId: customerId ? Number(customerId) : null, unitSystem: 'metric-kpa' };
  }
  next();
};

async function rig(limits: Partial<LiveLimits> = {}): Promise<Rig> {
  const server = http.createServer((_req, res) => res.writeHead(404).end());
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  const bus = new EventBus();
  const hub = new LiveHub({ server, bus, logger: createLogger('silent'), middlewares: [headerSignIn], allowedOrigins: () => true, limits });
  hub.start();
  const r: Rig = {
    hub,
    bus,
    port: (server.address() as AddressInfo).port,
    async stop() {
      hub.stop();
      server.closeAllConnections();
      await new Promise<void>((resolve) => server.close(() => resolve()));
    },
  };
  rigs.push(r);
  return r;
}

function open(r: Rig, user: string, opts: WebSocket.ClientOptions = {}): Promise<{ ws: WebSocket; frames: string[]; closed: Promise<number> }> {
  return new Promise((resolve, reject) => {
    const ws = new WebSocket(`ws://127.0.0.1:${r.port}/ws`, { ...opts, headers: { 'x-test-user': user } });
    const frames: string[] = [];
    const closed = new Promise<number>((res) => ws.once('close', (code) => res(code)));
    ws.on('message', (d) => frames.push(d.toString()));
    ws.once('open', () => resolve({ ws, frames, closed }));
    ws.once('error', reject);
  });
}

/** A hand-made upgrade that reads the 101 answer and then never reads again. */
function neverReadingClient(r: Rig, user: string): Promise<net.Socket> {
  return new Promise((resolve, reject) => {
    const s = net.connect(r.port, '127.0.0.1', () => {
      s.write(
        `GET /ws HTTP/1.1\r\nHost: 127.0.0.1:${r.port}\r\nUpgrade: websocket\r\nConnection: Upgrade\r\n` +
          `Sec-WebSocket-Key: ${Buffer.from('0123456789abcdef').toString('base64')}\r\nSec-WebSocket-Version: 13\r\nx-test-user: ${user}\r\n\r\n`,
      );
    });
    s.once('data', (d) => {
      s.pause();
      if (d.toString('latin1').startsWith('HTTP/1.1 101')) resolve(s);
      else reject(new Error(`upgrade refused: ${d.toString('latin1').split('\r\n')[0]}`));
    });
    s.once('error', reject);
  });
}

/** Polls until the condition holds (10 s at most). */
async function waitFor(fn: () => boolean, timeoutMs = 10_000): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (!fn()) {
    if (Date.now() > deadline) throw new Error(`condition not met within ${timeoutMs} ms`);
    await new Promise((res) => setTimeout(res, 20));
  }
}

const tick = () => new Promise((res) => setTimeout(res, 0));

describe('a client that stops reading', () => {
  it('is terminated once its send buffer passes the bound, while a reading client keeps its socket', async () => {
    const r = await rig({ maxBufferedBytes: 256 * 1024 });
    const stuck = await neverReadingClient(r, '1:technician');
    const reader = await open(r, '2:technician');
    await waitFor(() => r.hub.size === 2);
    // 4 kB frames: about 16 MB in all at most, past any loopback socket buffers.
    const serial = 'S'.repeat(4000);
    for (let i = 0; i < 40 && r.hub.drops.slowConsumer === 0; i++) {
      for (let j = 0; j < 100; j++) r.bus.emit('controller', { boxId: 1, customerId: 1, serial, online: true, at: new Date().toISOString() });
      await tick();
    }
    expect(r.hub.drops.slowConsumer).toBe(1);
    expect(r.hub.size).toBe(1);
    expect(reader.ws.readyState).toBe(WebSocket.OPEN);
    stuck.destroy();
  });
});

describe('liveness', () => {
  it('does not count a JSON pong: a client that answers only in JSON is dropped', async () => {
    const r = await rig({ heartbeatMs: 100 });
    const jsonOnly = await open(r, '1:technician', { autoPong: false });
    jsonOnly.ws.on('message', (d) => {
      if ((JSON.parse(d.toString()) as { type: string }).type === 'ping') jsonOnly.ws.send(JSON.stringify({ type: 'pong' }));
    });
    const healthy = await open(r, '2:technician');
    expect(await jsonOnly.closed).toBe(1006); // terminated, no close frame
    expect(jsonOnly.frames.some((f) => f.includes('"ping"'))).toBe(true);
    expect(r.hub.drops.missedHeartbeat).toBe(1);
    await new Promise((res) => setTimeout(res, 350));
    expect(healthy.ws.readyState).toBe(WebSocket.OPEN);
    healthy.ws.close();
  });
});

describe('sockets per user', () => {
  it('closes the oldest socket of a user who opens one more than the cap, and leaves other users alone', async () => {
    const r = await rig({ maxSocketsPerUser: 2 });
    const first = await open(r, '7:technician');
    const second = await open(r, '7:technician');
    const other = await open(r, '8:technician');
    const third = await open(r, '7:technician');
    expect(await first.closed).toBe(LIVE_CLOSE.tooManySockets);
    expect(second.ws.readyState).toBe(WebSocket.OPEN);
    expect(third.ws.readyState).toBe(WebSocket.OPEN);
    expect(other.ws.readyState).toBe(WebSocket.OPEN);
    expect(r.hub.size).toBe(3);
    for (const s of [second, third, other]) s.ws.close();
  });
});

describe('a change of access', () => {
  it("closes only that user's sockets with 4003", async () => {
    const r = await rig();
    const changed = await open(r, '5:manager:1');
    const unchanged = await open(r, '6:manager:1');
    r.bus.emit('userAccessChanged', { userId: 5, changed: ['customerId'] });
    expect(await changed.closed).toBe(LIVE_CLOSE.accessChanged);
    expect(unchanged.ws.readyState).toBe(WebSocket.OPEN);
    unchanged.ws.close();
  });

  it("filters events through the tenant scope: a manager gets only their customer's events", async () => {
    const r = await rig();
    const mine = await open(r, '5:manager:1');
    const tech = await open(r, '6:technician');
    r.bus.emit('controller', { boxId: 9, customerId: 2, serial: 'OTHER-CUSTOMER', online: true, at: new Date().toISOString() });
    r.bus.emit('controller', { boxId: 3, customerId: 1, serial: 'OWN-CUSTOMER', online: true, at: new Date().toISOString() });
    await waitFor(() => tech.frames.some((f) => f.includes('OWN-CUSTOMER')) && mine.frames.some((f) => f.includes('OWN-CUSTOMER')));
    expect(tech.frames.some((f) => f.includes('OTHER-CUSTOMER'))).toBe(true);
    expect(mine.frames.some((f) => f.includes('OTHER-CUSTOMER'))).toBe(false);
    mine.ws.close();
    tech.ws.close();
  });
});
