/**
 * The embedded MQTT broker (aedes 1.x, MQTT 3.1.1) with a durable session store on disk
 * (journalPersistence.ts), device sign-in against the controllers table and a topic ACL:
 * a controller publishes only under rimehold/v1/ctl/{its serial}/ and subscribes only to its own
 * config/set. The ingest is an ordinary client of this broker (or of an external one).
 */
import net from 'node:net';
import { mkdirSync } from 'node:fs';
import type { AddressInfo } from 'node:net';
import { Aedes, type AuthenticateError, type Client } from 'aedes';
// The package's main export wraps this in the callback API of aedes 0.x; aedes 1.x wants the async class.
import AsyncLevelPersistence from 'aedes-persistence-level/asyncPersistence.js';
import { Level } from 'level';
import { JournalPersistence } from './journalPersistence';
import type { Logger } from '../logger';
import type { Models } from '../models';
import type { EventBus } from '../events/bus';
import type { TelemetryMetrics } from '../telemetry/metrics';
import { parseControllerTopic, TOPIC_PREFIX } from '../../shared/schemas/telemetry';
import { verifyDeviceSecret } from '../controllers/secrets';

export const SIM_FAULT_TOPIC = 'rimehold/v1/sim/fault';

export interface BrokerOptions {
  host: string;
  port: number;
  persistenceDir: string;
  persistence?: 'journal' | 'level' | 'memory';
  ingestUser: string;
  ingestPassword: string;
  simUser: string | null;
  simPassword: string | null;
  ingestQueueLimit: number;
  models: Models;
  bus: EventBus;
  metrics: TelemetryMetrics;
  logger: Logger;
}

type Principal = { kind: 'controller'; serial: string } | { kind: 'ingest' } | { kind: 'sim' };

const CONTROLLER_PUBLISH = new Set(['telemetry', 'status', 'config/ack']);
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

export class EmbeddedBroker {
  private aedes: Aedes | null = null;
  private server: net.Server | null = null;
  private db: Level | null = null;
  private journal: JournalPersistence | null = null;
  private principals = new WeakMap<Client, Principal>();
  /** Telemetry published by controllers and not yet acknowledged by the ingest. */
  private ingestQueueDepth = 0;
  private readonly onRevoked = ({ serial }: { serial: string }) => this.kick(serial);
  private lastIngestAckAt = Date.now();
  private watchdog: NodeJS.Timeout | null = null;
  /** Times the stall watchdog had to reconnect the ingest. */
  stallRecoveries = 0;
  port = 0;

  constructor(private readonly o: BrokerOptions) {}

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
      concurrency: 1000,
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
        const reason = client ? this.publishRefusal(client, packet.topic) : 'no-client';
        if (reason) {
          o.metrics.refused.inc({ reason });
          return done(new Error(reason));
        }
        done(null);
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
    o.bus.on('controllerRevoked', this.onRevoked);

    const server = net.createServer(aedes.handle);
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

  /** True while the listener is up. */
  get up(): boolean {
    return this.server?.listening === true && this.aedes?.closed === false;
  }

  private async authenticate(client: Client, username: string | undefined, password: Buffer | undefined): Promise<Principal> {
    const o = this.o;
    const pw = password?.toString() ?? '';
    if (username === o.ingestUser) {
      if (!sameSecret(pw, o.ingestPassword) || !client.id.startsWith('rimehold-')) throw authError(4, 'bad-credentials');
      return { kind: 'ingest' };
    }
    if (o.simUser && o.simPassword && username === o.simUser) {
      if (!sameSecret(pw, o.simPassword) || !client.id.startsWith('rimehold-')) throw authError(4, 'bad-credentials');
      return { kind: 'sim' };
    }
    if (!username) throw authError(4, 'bad-credentials');
    // A controller's client id is fixed so it can never take over another client's session.
    if (client.id !== `ctl-${username}`) throw authError(5, 'client-id');
    const ctl = await o.models.Controller.findOne({ where: { serial: username } });
    if (!ctl || !verifyDeviceSecret(pw, ctl.secretHash)) throw authError(4, 'bad-credentials');
    if (ctl.disabled) throw authError(5, 'disabled');
    // aedes keeps the CONNECT packet's will in _will until the session is set up.
    const will = (client as unknown as { _will?: { topic?: string } })._will;
    if (will?.topic && will.topic !== `${TOPIC_PREFIX}/${username}/status`) throw authError(5, 'will-acl');
    return { kind: 'controller', serial: username };
  }

  /** Why a publish is refused, or null when allowed. */
  private publishRefusal(client: Client, topic: string): string | null {
    const p = this.principals.get(client);
    if (!p) return 'unauthenticated';
    if (topic.startsWith('$SYS')) return 'publish-acl';
    if (p.kind === 'ingest') {
      const t = parseControllerTopic(topic);
      return (t && t.kind === 'config/set') || topic === SIM_FAULT_TOPIC ? null : 'publish-acl';
    }
    if (p.kind === 'sim') return 'publish-acl';
    const t = parseControllerTopic(topic);
    if (!t || t.serial !== p.serial || !CONTROLLER_PUBLISH.has(t.kind)) return 'publish-acl';
    if (t.kind === 'telemetry' && this.ingestQueueDepth >= this.o.ingestQueueLimit) return 'queue-full';
    return null;
  }

  private maySubscribe(client: Client, topic: string): boolean {
    const p = this.principals.get(client);
    if (!p) return false;
    if (p.kind === 'ingest') return topic.startsWith(`${TOPIC_PREFIX}/+/`) || topic === `${TOPIC_PREFIX}/#`;
    if (p.kind === 'sim') return topic === SIM_FAULT_TOPIC;
    return topic === `${TOPIC_PREFIX}/${p.serial}/config/set`;
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

  /** Drops a controller's connection (disabled or secret rotated). */
  kick(serial: string): void {
    const clients = (this.aedes as unknown as { clients?: Record<string, Client> } | null)?.clients;
    const c = clients?.[`ctl-${serial}`];
    if (c) c.close();
  }

  /** Stops the listener and the broker and closes the store. */
  async stop(): Promise<void> {
    this.o.bus.off('controllerRevoked', this.onRevoked);
    if (this.watchdog) clearInterval(this.watchdog);
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
