/**
 * The embedded MQTT broker (aedes 1.x, MQTT 3.1.1) with a durable session store on disk
 * (journalPersistence.ts), device sign-in against the controllers table and a topic ACL:
 * a controller publishes only under rimehold/v1/ctl/{its serial}/ and subscribes only to its own
 * config/set. The ingest is an ordinary client of this broker (or of an external one).
 */
import { createBrokerEmitter } from './emitter';
import net from 'node:net';
import { mkdirSync } from 'node:fs';
import type { AddressInfo } from 'node:net';
import { Aedes, type AuthenticateError, type Client, type PublishPacket } from 'aedes';
// The package's main export wraps this in the callback API of aedes 0.x; aedes 1.x wants the async class.
import AsyncLevelPersistence from 'aedes-persistence-level/asyncPersistence.js';
import { Level } from 'level';
import { JournalPersistence } from './journalPersistence';
import type { Logger } from '../logger';
import type { Models } from '../models';
import type { EventBus } from '../events/bus';
import { INGEST_READY_TOPIC, parseControllerTopic, TOPIC_PREFIX } from '../../shared/schemas/telemetry';
import { verifyDeviceSecret } from '../controllers/secrets';
import { DEFAULT_BROKER_LIMITS, PacketGate, SignInThrottle, type BrokerLimits } from './limits';

export const SIM_FAULT_TOPIC = 'rimehold/v1/sim/fault';

/**
 * The broker's own metrics: the server's registry (inline), or counters that the broker process
 * forwards to the server over IPC (brokerProcess.ts). TelemetryMetrics satisfies this.
 */
export interface BrokerMetrics {
  refused: { inc(labels: { reason: string }): void };
  brokerQueueDepth: { set(value: number): void };
  connectedControllers: { inc(): void; dec(): void };
}

/** What main.ts, the tests and the benchmark use of a running embedded broker, inline or in its own process. */
export interface BrokerHandle {
  /** The TCP port it listens on (kept across a restart). */
  readonly port: number;
  /** True while the listener is up. */
  readonly up: boolean;
  /** Times the stall watchdog had to reconnect the ingest. */
  readonly stallRecoveries: number;
  /** Starts the broker; resolves the port. */
  start(): Promise<number>;
  /** Stops the broker and closes its store. */
  stop(): Promise<void>;
  /** Drops every connection signed in as this controller. */
  dropController(serial: string): void;
}

export interface BrokerOptions {
  host: string;
  port: number;
  persistenceDir: string;
  persistence?: 'journal' | 'level' | 'memory';
  ingestUser: string;
  ingestPassword: string;
  /** The one client id the ingest account may use (default 'rimehold-ingest'). */
  ingestClientId?: string;
  simUser: string | null;
  simPassword: string | null;
  /** The one client id the simulator's account may use (default 'rimehold-sim'). */
  simClientId?: string;
  /** Packet, connection and sign-in limits (defaults: DEFAULT_BROKER_LIMITS). */
  limits?: Partial<BrokerLimits>;
  ingestQueueLimit: number;
  models: Pick<Models, 'Controller'>;
  bus: EventBus;
  metrics: BrokerMetrics;
  logger: Logger;
}

type Principal = { kind: 'controller'; serial: string } | { kind: 'ingest' } | { kind: 'sim' };

const CONTROLLER_PUBLISH = new Set(['telemetry', 'status', 'config/ack']);
/** A device username is a serial as provisioned (ControllerCreateBody in shared/schemas/boxes.ts). */
const SERIAL_FORMAT = /^[A-Za-z0-9][A-Za-z0-9_-]{2,39}$/;
/**
 * The ingest acknowledged nothing for this long while telemetry waits: treat its session as stalled.
 * Long enough that a slow commit under load never trips it (a reconnect discards uncommitted work).
 */
const STALL_MS = 10_000;

function authError(code: 4 | 5, message: string): AuthenticateError {
  const err = new Error(message) as AuthenticateError;
  err.returnCode = code;
  return err;
}

/** Constant-time-ish string compare for service passwords. */
function sameSecret(a: string, b: string): boolean {
  if (a.length !== b.length) return false;
  let diff = 0;
  for (let i = 0; i < a.length; i++) diff |= a.charCodeAt(i) ^ b.charCodeAt(i);
  return diff === 0;
}

/** Messages aedes delivers at once before it queues (its emitter's concurrency). */
const BROKER_CONCURRENCY = 1000;

export class EmbeddedBroker implements BrokerHandle {
  private aedes: Aedes | null = null;
  private server: net.Server | null = null;
  private db: Level | null = null;
  private journal: JournalPersistence | null = null;
  private principals = new WeakMap<Client, Principal>();
  /** Telemetry published by controllers and not yet acknowledged by the ingest. */
  private ingestQueueDepth = 0;
  private readonly onRevoked = ({ serial }: { serial: string }) => this.dropController(serial);
  private readonly limits: BrokerLimits;
  private readonly throttle: SignInThrottle;
  /** Open sockets, and those that have not completed CONNECT yet (with their deadline timers). */
  private gates = new Set<PacketGate>();
  private pending = new Map<PacketGate, NodeJS.Timeout>();
  private lastIngestAckAt = Date.now();
  private watchdog: NodeJS.Timeout | null = null;
  /** Times the stall watchdog had to reconnect the ingest. */
  stallRecoveries = 0;
  port = 0;

  constructor(private readonly o: BrokerOptions) {
    this.limits = { ...DEFAULT_BROKER_LIMITS, ...o.limits };
    this.throttle = new SignInThrottle({ maxFailures: this.limits.maxDeviceAuthFailures, lockoutMs: this.limits.deviceAuthLockoutMs, unknownSerialTtlMs: this.limits.unknownSerialTtlMs });
  }

  /** Starts the broker and its TCP listener; resolves the port. */
  async start(): Promise<number> {
    const o = this.o;
    mkdirSync(o.persistenceDir, { recursive: true });
    // journal (default): durable, see journalPersistence.ts. level: aedes-persistence-level, kept
    // for comparison in bench:ingest. memory: loses sessions on restart, for measuring only.
    const kind = o.persistence ?? 'journal';
    this.db = kind === 'level' ? new Level(o.persistenceDir) : null;
    this.journal = kind === 'journal' ? new JournalPersistence({ dir: o.persistenceDir }) : null;
    const persistence = this.db ? new AsyncLevelPersistence(this.db) : (this.journal ?? undefined);
    const aedes = await Aedes.createBroker({
      ...(persistence ? { persistence } : {}),
      concurrency: BROKER_CONCURRENCY,
      mq: createBrokerEmitter(BROKER_CONCURRENCY),
      heartbeatInterval: 60_000,
      connectTimeout: 30_000,
      authenticate: (client, username, password, done) => {
        this.authenticate(client, username, password).then(
          (p) => {
            this.principals.set(client, p);
            done(null, true);
          },
          (err: AuthenticateError) => {
            o.metrics.refused.inc({ reason: err.message });
            done(err, false);
          },
        );
      },
      authorizePublish: (client, packet, done) => {
        const reason = client ? this.publishRefusal(client, packet) : 'no-client';
        if (reason) {
          o.metrics.refused.inc({ reason });
          return done(new Error(reason));
        }
        // aedes writes a QoS 1 PUBACK before it hands the message to the store: a controller's
        // publish is journalled (group commit, fdatasync) here first, so no acknowledged reading
        // is lost at a crash. Past the journal's size bound it is refused: the device keeps it.
        const journal = this.journal;
        if (!journal || !client || packet.qos !== 1 || this.principals.get(client)?.kind !== 'controller') return done(null);
        if (!journal.acceptsIncoming()) {
          o.metrics.refused.inc({ reason: 'journal-full' });
          return done(new Error('journal-full'));
        }
        journal.appendIncoming(client.id, packet.topic, Buffer.from(packet.payload)).then(
          () => done(null),
          (err: Error) => {
            o.metrics.refused.inc({ reason: 'journal-write' });
            done(err);
          },
        );
      },
      authorizeSubscribe: (client, sub, done) => {
        if (!this.maySubscribe(client, sub.topic)) {
          o.metrics.refused.inc({ reason: 'subscribe-acl' });
          return done(null, null);
        }
        done(null, sub);
      },
    });
    aedes.on('publish', (packet, client) => {
      if (client && this.principals.get(client)?.kind === 'controller' && packet.topic.endsWith('/telemetry')) {
        this.ingestQueueDepth++;
        o.metrics.brokerQueueDepth.set(this.ingestQueueDepth);
      }
    });
    aedes.on('ack', (packet, client) => {
      if (client && packet && this.principals.get(client)?.kind === 'ingest' && 'topic' in packet && typeof packet.topic === 'string' && packet.topic.endsWith('/telemetry')) {
        this.ingestQueueDepth = Math.max(0, this.ingestQueueDepth - 1);
        this.lastIngestAckAt = Date.now();
        o.metrics.brokerQueueDepth.set(this.ingestQueueDepth);
      }
    });
    aedes.on('clientReady', (client) => {
      if (client.conn instanceof PacketGate) this.connected(client.conn);
      const kind = this.principals.get(client)?.kind;
      if (kind === 'controller') o.metrics.connectedControllers.inc();
      if (kind === 'ingest') {
        // aedes now replays the session's stored queue; those redeliveries are not counted again.
        this.ingestQueueDepth = 0;
        this.lastIngestAckAt = Date.now();
      }
    });
    // Seen under load with aedes 1.2 + aedes-persistence-level 9.2 (hence the journal store): a few
    // QoS 1 messages stayed in the ingest session's stored queue, undelivered, until the session
    // reconnected. As a last resort, when telemetry is waiting and the ingest has acknowledged
    // nothing for STALL_MS, drop its connection: it comes straight back (clean: false) and the
    // broker replays the stored queue.
    this.watchdog = setInterval(() => this.checkStall(), 1000);
    this.watchdog.unref();
    aedes.on('clientDisconnect', (client) => {
      if (this.principals.get(client)?.kind === 'controller') o.metrics.connectedControllers.dec();
    });
    aedes.on('clientError', (client, err) => {
      o.logger.debug({ clientId: client.id, err: err.message }, 'mqtt client error');
    });
    this.aedes = aedes;
    this.republishIncoming(aedes);
    o.bus.on('controllerRevoked', this.onRevoked);

    const server = net.createServer((socket) => this.accept(socket));
    await new Promise<void>((resolve, reject) => {
      server.once('error', reject);
      // A restart keeps the port the controllers know.
      server.listen(this.port || o.port, o.host, () => resolve());
    });
    this.server = server;
    this.port = (server.address() as AddressInfo).port;
    o.logger.info({ port: this.port, persistence: o.persistenceDir }, 'embedded MQTT broker listening');
    return this.port;
  }

  /**
   * Settles journalled incoming publishes once aedes has handed them on, and publishes again those
   * that a crash left acknowledged but in no queue (the ingest stores a reading twice only once).
   */
  private republishIncoming(aedes: Aedes): void {
    const journal = this.journal;
    if (!journal) return;
    aedes.on('publish', (packet) => {
      if (packet.qos === 1) journal.settleIncoming(packet.topic, packet.payload);
    });
    for (const m of journal.unsettledIncoming()) {
      aedes.publish({ cmd: 'publish', topic: m.topic, payload: m.payload, qos: 1, retain: false, dup: false }, (err) => {
        if (err) this.o.logger.warn({ topic: m.topic, err: err.message }, 'journalled publish not re-published');
      });
    }
  }

  /** True while the listener is up. */
  get up(): boolean {
    return this.server?.listening === true && this.aedes?.closed === false;
  }

  /** Takes a new TCP socket: closes it over the connection caps, else gates it and hands it to aedes. */
  private accept(socket: net.Socket): void {
    const aedes = this.aedes;
    const l = this.limits;
    if (!aedes || this.gates.size >= l.maxConnections || this.pending.size >= l.maxPendingConnects) {
      this.o.metrics.refused.inc({ reason: aedes && this.gates.size >= l.maxConnections ? 'max-connections' : 'max-pending-connects' });
      socket.destroy();
      return;
    }
    const gate = new PacketGate(socket, l, (reason) => this.o.metrics.refused.inc({ reason }));
    this.gates.add(gate);
    const deadline = setTimeout(() => {
      this.o.metrics.refused.inc({ reason: 'connect-deadline' });
      gate.destroy();
    }, l.connectDeadlineMs);
    deadline.unref();
    this.pending.set(gate, deadline);
    gate.on('close', () => {
      this.gates.delete(gate);
      this.connected(gate);
    });
    aedes.handle(gate);
  }

  /** The socket completed CONNECT (or closed): no longer pending, no deadline. */
  private connected(gate: PacketGate): void {
    const t = this.pending.get(gate);
    if (t) clearTimeout(t);
    this.pending.delete(gate);
  }

  private async authenticate(client: Client, username: string | undefined, password: Buffer | undefined): Promise<Principal> {
    const o = this.o;
    const pw = password?.toString() ?? '';
    // Each service account: its own secret and exactly one client id, so it cannot take over another session.
    if (username === o.ingestUser) {
      if (!sameSecret(pw, o.ingestPassword) || client.id !== (o.ingestClientId ?? 'rimehold-ingest')) throw authError(4, 'bad-credentials');
      return { kind: 'ingest' };
    }
    if (o.simUser && o.simPassword && username === o.simUser) {
      if (!sameSecret(pw, o.simPassword) || client.id !== (o.simClientId ?? 'rimehold-sim')) throw authError(4, 'bad-credentials');
      return { kind: 'sim' };
    }
    // Device sign-in: everything that can be refused without the database is refused first.
    const address = client.conn instanceof PacketGate ? client.conn.remoteAddress : '';
    if (this.throttle.locked(address) && !(username && this.throttle.isTrusted(username))) throw authError(5, 'address-locked');
    const fail = (code: 4 | 5, reason: string): AuthenticateError => {
      this.throttle.fail(address);
      return authError(code, reason);
    };
    if (!username || !SERIAL_FORMAT.test(username)) throw fail(4, 'bad-username');
    // A controller's client id is fixed so it can never take over another client's session.
    if (client.id !== `ctl-${username}`) throw fail(5, 'client-id');
    if (this.throttle.knownUnknown(username)) throw fail(4, 'unknown-serial');
    const ctl = await o.models.Controller.findOne({ where: { serial: username } });
    // The column compares case-insensitively: the serial must match byte for byte.
    if (!ctl || ctl.serial !== username) {
      this.throttle.rememberUnknown(username);
      throw fail(4, 'unknown-serial');
    }
    if (!verifyDeviceSecret(pw, ctl.secretHash)) throw fail(4, 'bad-credentials');
    if (ctl.disabled) throw authError(5, 'disabled');
    this.throttle.trust(ctl.serial);
    // aedes keeps the CONNECT packet's will in _will until the session is set up.
    const will = (client as unknown as { _will?: { topic?: string } })._will;
    if (will?.topic && will.topic !== `${TOPIC_PREFIX}/${ctl.serial}/status`) throw authError(5, 'will-acl');
    return { kind: 'controller', serial: ctl.serial };
  }

  /** Why a publish is refused, or null when allowed. */
  private publishRefusal(client: Client, packet: Pick<PublishPacket, 'topic' | 'qos' | 'retain' | 'payload'>): string | null {
    const topic = packet.topic;
    const p = this.principals.get(client);
    if (!p) return 'unauthenticated';
    if (topic.startsWith('$SYS')) return 'publish-acl';
    if (p.kind === 'ingest') {
      const t = parseControllerTopic(topic);
      return (t && (t.kind === 'config/set' || t.kind === 'committed')) || topic === SIM_FAULT_TOPIC || topic === INGEST_READY_TOPIC ? null : 'publish-acl';
    }
    if (p.kind === 'sim') return 'publish-acl';
    const t = parseControllerTopic(topic);
    if (!t || t.serial !== p.serial || !CONTROLLER_PUBLISH.has(t.kind)) return 'publish-acl';
    if (t.kind === 'telemetry') {
      // The protocol says QoS 1: a QoS 0 message is never acknowledged by the ingest, so it would
      // count towards the queue limit for good. Retained telemetry would stay in memory and the journal.
      if (packet.qos !== 1) return 'telemetry-qos';
      if (packet.retain) return 'telemetry-retain';
      if (this.ingestQueueDepth >= this.o.ingestQueueLimit) return 'queue-full';
    }
    return null;
  }

  private maySubscribe(client: Client, topic: string): boolean {
    const p = this.principals.get(client);
    if (!p) return false;
    if (p.kind === 'ingest') return topic.startsWith(`${TOPIC_PREFIX}/+/`) || topic === `${TOPIC_PREFIX}/#`;
    if (p.kind === 'sim') return topic === SIM_FAULT_TOPIC;
    return topic === `${TOPIC_PREFIX}/${p.serial}/config/set` || topic === `${TOPIC_PREFIX}/${p.serial}/committed` || topic === INGEST_READY_TOPIC;
  }

  private checkStall(): void {
    if (this.ingestQueueDepth === 0 || Date.now() - this.lastIngestAckAt < STALL_MS) return;
    const clients = (this.aedes as unknown as { clients?: Record<string, Client> } | null)?.clients ?? {};
    const ingest = Object.values(clients).find((c) => this.principals.get(c)?.kind === 'ingest');
    if (!ingest) return;
    this.stallRecoveries++;
    this.o.logger.warn({ waiting: this.ingestQueueDepth }, 'ingest session stalled with telemetry waiting: reconnecting it to replay its stored queue');
    this.lastIngestAckAt = Date.now();
    ingest.close();
  }

  /** Drops every connection signed in as this controller (disabled or secret rotated). */
  dropController(serial: string): void {
    const clients = (this.aedes as unknown as { clients?: Record<string, Client> } | null)?.clients ?? {};
    for (const c of Object.values(clients)) {
      const p = this.principals.get(c);
      if (p?.kind === 'controller' && p.serial === serial) c.close();
    }
  }

  /** Stops the listener and the broker and closes the store. */
  async stop(): Promise<void> {
    this.o.bus.off('controllerRevoked', this.onRevoked);
    if (this.watchdog) clearInterval(this.watchdog);
    for (const t of this.pending.values()) clearTimeout(t);
    this.pending.clear();
    const server = this.server;
    const aedes = this.aedes;
    this.server = null;
    this.aedes = null;
    if (aedes) await new Promise<void>((resolve) => aedes.close(() => resolve()));
    if (server) await new Promise<void>((resolve) => server.close(() => resolve()));
    if (this.db) await this.db.close().catch(() => undefined);
    this.db = null;
    // aedes.close() does not destroy its persistence: flush and close the journal here.
    if (this.journal) await this.journal.destroy().catch(() => undefined);
    this.journal = null;
  }
}
