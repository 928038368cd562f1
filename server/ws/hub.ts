/**
 * The live WebSocket hub at /ws on the HTTP server. The upgrade is authenticated with the session
 * cookie (and the Origin checked); every event is filtered by the user's tenant scope on the
 * server and serialised once. Heartbeats every 25 s; a socket that misses one is dropped.
 */
import type http from 'node:http';
import type { Duplex } from 'node:stream';
import type { RequestHandler, Request, Response } from 'express';
import { WebSocketServer, type WebSocket } from 'ws';
import type { SessionUser } from '../../shared/schemas/auth';
import { ClientFrame, type LiveEvent } from '../../shared/schemas/live';
import type { EventBus, EventBusMap } from '../events/bus';
import type { Logger } from '../logger';

const HEARTBEAT_MS = 25_000;

interface Peer {
  ws: WebSocket;
  user: SessionUser;
  alive: boolean;
}

export interface HubOptions {
  server: http.Server;
  bus: EventBus;
  logger: Logger;
  /** Session + passport middlewares, run on the upgrade request. */
  middlewares: RequestHandler[];
  /** Origins allowed to open a socket (same-origin page, dev server). */
  allowedOrigins: (origin: string, host: string | undefined) => boolean;
}

export class LiveHub {
  private wss = new WebSocketServer({ noServer: true, maxPayload: 4096 });
  private peers = new Set<Peer>();
  private heartbeat: NodeJS.Timeout | null = null;
  private readonly unsub: Array<() => void> = [];

  constructor(private readonly o: HubOptions) {}

  /** Attaches to the HTTP server's upgrade event and the bus. */
  start(): void {
    this.o.server.on('upgrade', this.onUpgrade);
    const on = <K extends keyof EventBusMap>(name: K, fn: (...args: EventBusMap[K]) => void) => {
      this.o.bus.on(name, fn as never);
      this.unsub.push(() => this.o.bus.off(name, fn as never));
    };
    on('reading', (e) => this.send(e.customerId, { type: 'reading', boxId: e.boxId, reading: e.reading }));
    on('controller', (e) => this.send(e.customerId, { type: 'controller', boxId: e.boxId, serial: e.serial, online: e.online, at: e.at }));
    on('settings', (e) => this.send(e.customerId, { type: 'settings', boxId: e.boxId, change: e.change }));
    on('userSessionEnded', ({ userId }) => {
      for (const p of this.peers) if (p.user.id === userId) p.ws.close(4001, 'session ended');
    });
    this.heartbeat = setInterval(() => this.beat(), HEARTBEAT_MS);
    this.heartbeat.unref();
  }

  /** Number of open sockets. */
  get size(): number {
    return this.peers.size;
  }

  private readonly onUpgrade = (req: http.IncomingMessage, socket: Duplex, head: Buffer) => {
    socket.on('error', () => socket.destroy());
    const url = new URL(req.url ?? '/', 'http://localhost');
    if (url.pathname !== '/ws') return; // another upgrade handler (e.g. Vite in dev) may own it
    const origin = req.headers.origin;
    if (origin !== undefined && !this.o.allowedOrigins(origin, req.headers.host)) return this.refuse(socket, 403, 'Forbidden');
    const [first, ...rest] = this.o.middlewares;
    const run = (i: number, mw: RequestHandler | undefined): void => {
      if (!mw) return this.admit(req, socket, head);
      mw(req as Request, {} as Response, (err?: unknown) => (err ? this.refuse(socket, 500, 'Error') : run(i + 1, rest[i])));
    };
    run(0, first);
  };

  private admit(req: http.IncomingMessage, socket: Duplex, head: Buffer): void {
    const user = (req as Request).user;
    if (!user) return this.refuse(socket, 401, 'Unauthorized');
    this.wss.handleUpgrade(req, socket, head, (ws) => {
      const peer: Peer = { ws, user, alive: true };
      this.peers.add(peer);
      ws.on('error', (err) => this.o.logger.debug({ err: err.message }, 'websocket error'));
      ws.on('pong', () => {
        peer.alive = true;
      });
      ws.on('message', (data) => {
        let parsed: unknown;
        try {
          parsed = JSON.parse(data.toString());
        } catch {
          return; // malformed frames are dropped
        }
        const f = ClientFrame.safeParse(parsed);
        if (f.success && f.data.type === 'pong') peer.alive = true;
      });
      ws.on('close', () => this.peers.delete(peer));
      ws.send(JSON.stringify({ type: 'hello', userId: user.id, serverTime: new Date().toISOString() } satisfies LiveEvent));
    });
  }

  private refuse(socket: Duplex, status: number, text: string): void {
    socket.write(`HTTP/1.1 ${status} ${text}\r\nConnection: close\r\n\r\n`);
    socket.destroy();
  }

  /** Sends an event to every peer allowed to see rows of this customer (serialised once). */
  private send(customerId: number, event: LiveEvent): void {
    if (this.peers.size === 0) return;
    const frame = JSON.stringify(event);
    for (const p of this.peers) {
      if (p.user.role === 'manager' && p.user.customerId !== customerId) continue;
      if (p.ws.readyState === p.ws.OPEN) p.ws.send(frame);
    }
  }

  private beat(): void {
    const frame = JSON.stringify({ type: 'ping', at: new Date().toISOString() } satisfies LiveEvent);
    for (const p of this.peers) {
      if (!p.alive) {
        p.ws.terminate();
        this.peers.delete(p);
        continue;
      }
      p.alive = false;
      p.ws.ping();
      p.ws.send(frame);
    }
  }

  /** Closes every socket and detaches. */
  stop(): void {
    this.o.server.off('upgrade', this.onUpgrade);
    for (const u of this.unsub) u();
    if (this.heartbeat) clearInterval(this.heartbeat);
    for (const p of this.peers) p.ws.terminate();
    this.peers.clear();
    this.wss.close();
  }
}
