/**
 * The live WebSocket hub at /ws on the HTTP server. The upgrade is authenticated with the session
 * cookie (and the Origin checked); every event is filtered by the user's tenant scope
 * (canSeeCustomer, server/auth/scope.ts) and serialised once.
 *
 * Limits, because a signed-in browser is still untrusted:
 * - liveness comes from protocol-level pongs only (a JSON `pong` frame proves nothing about reading);
 *   a socket that misses one heartbeat is terminated;
 * - a socket whose send buffer passes `maxBufferedBytes` (a client that stops reading) is terminated
 *   instead of the server buffering frames without bound;
 * - at most `maxSocketsPerUser` sockets per user: opening one more closes that user's oldest (4008);
 * - a socket keeps the user as they were at the upgrade, so it is closed when the session ends
 *   (4001) or the user's role, customer or account state changes (4003); the client reconnects
 *   and is authorised afresh.
 * Upgrades to any other path are refused (the API server owns no other upgrade; in dev, Vite's own
 * HMR socket lives on the Vite server, which proxies only /ws here).
 */
import type http from 'node:http';
import type { Duplex } from 'node:stream';
import type { RequestHandler, Request, Response } from 'express';
import { WebSocketServer, type WebSocket } from 'ws';
import type { SessionUser } from '../../shared/schemas/auth';
import { ClientFrame, type LiveEvent } from '../../shared/schemas/live';
import { canSeeCustomer } from '../auth/scope';
import type { EventBus, EventBusMap } from '../events/bus';
import type { Logger } from '../logger';

/** Close codes the hub uses (4000–4999 are the application's range, RFC 6455 §7.4.2). */
export const LIVE_CLOSE = { sessionEnded: 4001, accessChanged: 4003, tooManySockets: 4008 } as const;

export interface LiveLimits {
  /** Interval between protocol pings, ms; a socket with no pong by the next one is terminated. */
  heartbeatMs: number;
  /** Send-buffer bound, bytes: past it the socket is terminated (the client is not reading). */
  maxBufferedBytes: number;
  /** Open sockets allowed per user; one more closes the oldest. */
  maxSocketsPerUser: number;
}

/** Defaults: 25 s heartbeat, 1 MiB send buffer, 10 sockets per user (a few tabs and phones). */
export const DEFAULT_LIVE_LIMITS: LiveLimits = { heartbeatMs: 25_000, maxBufferedBytes: 1024 * 1024, maxSocketsPerUser: 10 };

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
  /** Overrides of DEFAULT_LIVE_LIMITS (tests use short heartbeats and small buffers). */
  limits?: Partial<LiveLimits>;
}

/** Counters of sockets the hub dropped, by reason (since start). */
export interface LiveDrops {
  slowConsumer: number;
  missedHeartbeat: number;
  overUserCap: number;
  badFrame: number;
}

export class LiveHub {
  private readonly wss = new WebSocketServer({ noServer: true, maxPayload: 4096 });
  private readonly peers = new Set<Peer>();
  private readonly limits: LiveLimits;
  private heartbeat: NodeJS.Timeout | null = null;
  private readonly unsub: Array<() => void> = [];
  readonly drops: LiveDrops = { slowConsumer: 0, missedHeartbeat: 0, overUserCap: 0, badFrame: 0 };

  constructor(private readonly opts: HubOptions) {
    this.limits = { ...DEFAULT_LIVE_LIMITS, ...opts.limits };
  }

  /** Attaches to the HTTP server's upgrade event and the bus. */
  start(): void {
    this.opts.server.on('upgrade', this.onUpgrade);
    const on = <K extends keyof EventBusMap>(name: K, fn: (...args: EventBusMap[K]) => void) => {
      this.opts.bus.on(name, fn as never);
      this.unsub.push(() => this.opts.bus.off(name, fn as never));
    };
    on('reading', (e) => this.send(e.customerId, { type: 'reading', boxId: e.boxId, reading: e.reading }));
    on('controller', (e) => this.send(e.customerId, { type: 'controller', boxId: e.boxId, serial: e.serial, online: e.online, at: e.at }));
    on('settings', (e) => this.send(e.customerId, { type: 'settings', boxId: e.boxId, change: e.change }));
    on('alarm', (e) => this.send(e.customerId, { type: 'alarm', alarm: e.alarm }));
    on('maintenanceChanged', (e) => this.send(e.customerId, { type: 'maintenance', boxId: e.boxId, until: e.until }));
    on('userSessionEnded', ({ userId }) => this.closeUser(userId, LIVE_CLOSE.sessionEnded, 'session ended'));
    on('userAccessChanged', ({ userId }) => this.closeUser(userId, LIVE_CLOSE.accessChanged, 'access changed'));
    this.heartbeat = setInterval(() => this.beat(), this.limits.heartbeatMs);
    this.heartbeat.unref();
  }

  /** Number of open sockets. */
  get size(): number {
    return this.peers.size;
  }

  private readonly onUpgrade = (req: http.IncomingMessage, socket: Duplex, head: Buffer) => {
    socket.on('error', () => socket.destroy());
    const url = new URL(req.url ?? '/', 'http://localhost');
    if (url.pathname !== '/ws') return this.refuse(socket, 404, 'Not Found');
    const origin = req.headers.origin;
    if (origin !== undefined && !this.opts.allowedOrigins(origin, req.headers.host)) return this.refuse(socket, 403, 'Forbidden');
    const [first, ...rest] = this.opts.middlewares;
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
      this.makeRoomFor(user.id);
      const peer: Peer = { ws, user, alive: true };
      this.peers.add(peer);
      ws.on('error', (err) => this.opts.logger.debug({ err: err.message }, 'websocket error'));
      ws.on('pong', () => {
        peer.alive = true;
      });
      ws.on('message', (data) => {
        // Client frames carry no liveness (only protocol pongs do); malformed ones are counted and dropped.
        let parsed: unknown;
        try {
          parsed = JSON.parse(data.toString());
        } catch {
          this.drops.badFrame++;
          return;
        }
        if (!ClientFrame.safeParse(parsed).success) this.drops.badFrame++;
      });
      ws.on('close', () => this.peers.delete(peer));
      this.deliver(peer, JSON.stringify({ type: 'hello', userId: user.id, serverTime: new Date().toISOString() } satisfies LiveEvent));
    });
  }

  /** Closes the user's oldest sockets so that one more stays within maxSocketsPerUser. */
  private makeRoomFor(userId: number): void {
    const own = [...this.peers].filter((p) => p.user.id === userId);
    for (const p of own.slice(0, Math.max(0, own.length - this.limits.maxSocketsPerUser + 1))) {
      this.drops.overUserCap++;
      this.peers.delete(p);
      p.ws.close(LIVE_CLOSE.tooManySockets, 'too many sockets');
    }
  }

  private closeUser(userId: number, code: number, reason: string): void {
    for (const p of this.peers) {
      if (p.user.id !== userId) continue;
      this.peers.delete(p);
      p.ws.close(code, reason);
    }
  }

  private refuse(socket: Duplex, status: number, text: string): void {
    socket.write(`HTTP/1.1 ${status} ${text}\r\nConnection: close\r\nContent-Length: 0\r\n\r\n`);
    socket.destroy();
  }

  /** Sends an event to every peer allowed to see rows of this customer (serialised once). */
  private send(customerId: number, event: LiveEvent): void {
    if (this.peers.size === 0) return;
    const frame = JSON.stringify(event);
    for (const p of this.peers) if (canSeeCustomer(p.user, customerId)) this.deliver(p, frame);
  }

  /** Sends one frame, terminating the socket when its send buffer is past the bound (bytes). */
  private deliver(peer: Peer, frame: string): void {
    if (peer.ws.readyState !== peer.ws.OPEN) return;
    peer.ws.send(frame);
    if (peer.ws.bufferedAmount > this.limits.maxBufferedBytes) {
      this.drops.slowConsumer++;
      this.peers.delete(peer);
      peer.ws.terminate();
    }
  }

  private beat(): void {
    const frame = JSON.stringify({ type: 'ping', at: new Date().toISOString() } satisfies LiveEvent);
    for (const p of this.peers) {
      if (!p.alive) {
        this.drops.missedHeartbeat++;
        this.peers.delete(p);
        p.ws.terminate();
        continue;
      }
      p.alive = false;
      p.ws.ping();
      // The JSON ping stays for the client's own staleness check; its JSON pong no longer counts.
      this.deliver(p, frame);
    }
  }

  /** Closes every socket and detaches. */
  stop(): void {
    this.opts.server.off('upgrade', this.onUpgrade);
    for (const u of this.unsub) u();
    if (this.heartbeat) clearInterval(this.heartbeat);
    for (const p of this.peers) p.ws.terminate();
    this.peers.clear();
    this.wss.close();
  }
}
