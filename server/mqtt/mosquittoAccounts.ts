/**
 * Device and service accounts on mosquitto (MQTT_BROKER=mosquitto), kept through the
 * dynamic-security plugin. Each controller gets a client (username = serial, password = its device
 * secret, client id fixed to `ctl-{serial}`) with a role of its own holding the same rules as the
 * embedded broker: publish its telemetry, status and config/ack, subscribe to its own config/set
 * and committed.
 */
import { existsSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { z } from 'zod';
import type { Config } from '../config';
import type { EventBus, EventBusMap } from '../events/bus';
import type { Logger } from '../logger';
import type { Models } from '../models';
import { INGEST_READY_TOPIC, TOPIC_PREFIX } from '../../shared/schemas/telemetry';
import { DynsecClient, DynsecError } from './dynsec';
import { INGEST_SHARE_GROUP, workerAccount } from '../telemetry/ingestWorkers';
import { DYNSEC_ADMIN_USER, readAdminSecret } from './mosquittoFiles';

/** The topic the server publishes demo faults on (same as the embedded broker's SIM_FAULT_TOPIC). */
const SIM_FAULT_TOPIC = 'rimehold/v1/sim/fault';

/** What the controller service calls when a controller's account changes (mosquitto only). */
export interface DeviceAccounts {
  /** Creates (or replaces) the broker account of a new controller. */
  provision(serial: string, secret: string): Promise<void>;
  /** Sets a new secret; the broker drops the connection signed in with the old one. */
  setSecret(serial: string, secret: string): Promise<void>;
  /** Enables or disables the account; disabling drops its connection. */
  setEnabled(serial: string, enabled: boolean): Promise<void>;
}

type Acl = { acltype: 'publishClientSend' | 'publishClientReceive' | 'subscribeLiteral'; topic: string; allow: true };
const allow = (acltype: Acl['acltype'], topic: string): Acl => ({ acltype, topic, allow: true });

/** The rules of one controller's role: its own topics only. */
export function controllerAcls(serial: string): Acl[] {
  const base = `${TOPIC_PREFIX}/${serial}`;
  return [
    allow('publishClientSend', `${base}/telemetry`),
    allow('publishClientSend', `${base}/status`),
    allow('publishClientSend', `${base}/config/ack`),
    allow('subscribeLiteral', `${base}/config/set`),
    allow('publishClientReceive', `${base}/config/set`),
    allow('subscribeLiteral', `${base}/committed`),
    allow('publishClientReceive', `${base}/committed`),
    allow('subscribeLiteral', INGEST_READY_TOPIC),
    allow('publishClientReceive', INGEST_READY_TOPIC),
  ];
}

/** What every ingest may send controllers: their committed seqs and the ingest-ready call. */
function confirmAcls(): Acl[] {
  return [allow('publishClientSend', `${TOPIC_PREFIX}/+/committed`), allow('publishClientSend', INGEST_READY_TOPIC)];
}

/** The ingest's rules: take every controller's telemetry, status and acks; send settings and demo faults. */
export function ingestAcls(): Acl[] {
  const kinds = ['telemetry', 'status', 'config/ack'];
  return [
    ...kinds.map((k) => allow('subscribeLiteral', `${TOPIC_PREFIX}/+/${k}`)),
    ...kinds.map((k) => allow('publishClientReceive', `${TOPIC_PREFIX}/+/${k}`)),
    allow('publishClientSend', `${TOPIC_PREFIX}/+/config/set`),
    ...confirmAcls(),
    allow('publishClientSend', SIM_FAULT_TOPIC),
  ];
}

/**
 * An ingest worker's rules: subscribe to every controller's telemetry through the workers' shared
 * subscription (the plugin checks the whole `$share/<group>/<filter>`), receive it, and tell
 * controllers what it has committed.
 */
export function workerAcls(): Acl[] {
  const topic = `${TOPIC_PREFIX}/+/telemetry`;
  return [allow('subscribeLiteral', `$share/${INGEST_SHARE_GROUP}/${topic}`), allow('publishClientReceive', topic), ...confirmAcls()];
}

/** The demo simulator's rules: the fault channel only. */
export function simAcls(): Acl[] {
  return [allow('subscribeLiteral', SIM_FAULT_TOPIC), allow('publishClientReceive', SIM_FAULT_TOPIC)];
}

const ROLE_PREFIX = 'rimehold-ctl-';
const roleOf = (serial: string) => `${ROLE_PREFIX}${serial}`;

export interface ServiceAccount {
  username: string;
  password: string;
  clientId: string;
}

export interface MosquittoAccountsOptions {
  url: string;
  adminPassword: string;
  ingest: ServiceAccount;
  /** The ingest workers' accounts (INGEST_WORKERS ≥ 2): telemetry through the shared subscription only. */
  workers?: ServiceAccount[];
  /** The simulator's account (demo mode), or null. */
  sim: ServiceAccount | null;
  /** Demo mode: the simulator's fleet file (serials with plaintext secrets), given accounts at start. */
  demoFleetFile?: string | null;
  models: Models;
  bus: EventBus;
  logger: Logger;
  timeoutMs?: number;
}

const FleetFile = z.object({ controllers: z.array(z.object({ serial: z.string().min(1), secret: z.string().min(1) }).passthrough()) });

/** The serials and secrets of a demo fleet file, or [] when it is missing or malformed (logged). */
function readFleet(file: string, logger: Logger): Array<{ serial: string; secret: string }> {
  if (!existsSync(file)) return [];
  try {
    const parsed = FleetFile.safeParse(JSON.parse(readFileSync(file, 'utf8')));
    if (parsed.success) return parsed.data.controllers;
    logger.warn({ file }, 'demo fleet file does not match its schema: no mosquitto accounts made for it');
  } catch (err) {
    logger.warn({ file, err: (err as Error).message }, 'demo fleet file unreadable: no mosquitto accounts made for it');
  }
  return [];
}

/** Keeps mosquitto's accounts in step with the controllers table. */
export class MosquittoAccounts implements DeviceAccounts {
  private readonly dynsec: DynsecClient;
  private readonly onRevoked = (e: EventBusMap['controllerRevoked'][0]) => void this.removeIfDeleted(e.serial);

  constructor(private readonly o: MosquittoAccountsOptions) {
    this.dynsec = new DynsecClient({ url: o.url, username: DYNSEC_ADMIN_USER, password: o.adminPassword, timeoutMs: o.timeoutMs });
  }

  /** Connects, sets up the service accounts, and logs controllers that have no account. */
  async start(): Promise<void> {
    await this.dynsec.start();
    await this.ensureAccount(this.o.ingest, 'rimehold-ingest', ingestAcls());
    for (const w of this.o.workers ?? []) await this.ensureAccount(w, 'rimehold-ingest-worker', workerAcls());
    if (this.o.sim) await this.ensureAccount(this.o.sim, 'rimehold-sim', simAcls());
    this.o.bus.on('controllerRevoked', this.onRevoked);
    // The demo seed writes fresh secrets into the fleet file at every reseed; bring the accounts in step.
    if (this.o.demoFleetFile) {
      const rows = await this.o.models.Controller.findAll({ attributes: ['serial', 'disabled'] });
      const disabled = new Map(rows.map((r) => [r.serial, r.disabled]));
      for (const c of readFleet(this.o.demoFleetFile, this.o.logger)) {
        if (!disabled.has(c.serial)) continue;
        await this.provision(c.serial, c.secret);
        if (disabled.get(c.serial)) await this.setEnabled(c.serial, false);
      }
    }
    await this.upgradeControllerRoles();
    const missing = await this.controllersWithoutAccount();
    if (missing.length) {
      this.o.logger.warn({ count: missing.length, serials: missing.slice(0, 50) }, 'controllers without a mosquitto account cannot sign in: rotate their secret to create one');
    }
  }

  /**
   * Adds to the roles of controllers provisioned by an earlier Rimehold the rules it has added since
   * (the `committed` topic): one listing, then only the missing rules.
   */
  private async upgradeControllerRoles(): Promise<void> {
    const data = (await this.dynsec.command('listRoles', { verbose: true, count: -1 })) as { roles?: unknown } | undefined;
    const roles = Array.isArray(data?.roles) ? (data.roles as Array<{ rolename?: unknown; acls?: Array<{ acltype?: unknown; topic?: unknown }> }>) : [];
    let added = 0;
    for (const role of roles) {
      if (typeof role.rolename !== 'string' || !role.rolename.startsWith(ROLE_PREFIX)) continue;
      const have = new Set((role.acls ?? []).map((a) => `${String(a.acltype)} ${String(a.topic)}`));
      for (const acl of controllerAcls(role.rolename.slice(ROLE_PREFIX.length))) {
        if (have.has(`${acl.acltype} ${acl.topic}`)) continue;
        await this.dynsec.command('addRoleACL', { rolename: role.rolename, ...acl });
        added++;
      }
    }
    if (added) this.o.logger.info({ added }, 'mosquitto: rules added to existing controller roles');
  }

  /** Serials in the controllers table that have no client in the dynamic-security file. */
  async controllersWithoutAccount(): Promise<string[]> {
    const data = (await this.dynsec.command('listClients', { verbose: false, count: -1 })) as { clients?: unknown } | undefined;
    const known = new Set(Array.isArray(data?.clients) ? data.clients.filter((c): c is string => typeof c === 'string') : []);
    const rows = await this.o.models.Controller.findAll({ attributes: ['serial'] });
    return rows.map((r) => r.serial).filter((s) => !known.has(s));
  }

  async provision(serial: string, secret: string): Promise<void> {
    await this.ensureAccount({ username: serial, password: secret, clientId: `ctl-${serial}` }, roleOf(serial), controllerAcls(serial));
  }

  async setSecret(serial: string, secret: string): Promise<void> {
    try {
      // The plugin drops the connections of a client whose password changes.
      await this.dynsec.command('setClientPassword', { username: serial, password: secret });
    } catch (err) {
      // A controller provisioned before mosquitto was chosen has no account: rotating creates it.
      if (!(err instanceof DynsecError) || err.reason !== 'Client not found') throw err;
      await this.provision(serial, secret);
    }
  }

  async setEnabled(serial: string, enabled: boolean): Promise<void> {
    try {
      await this.dynsec.command(enabled ? 'enableClient' : 'disableClient', { username: serial });
    } catch (err) {
      // Disabling an account that does not exist leaves nothing that could sign in.
      if (err instanceof DynsecError && err.reason === 'Client not found' && !enabled) return;
      throw err;
    }
  }

  /** A box deleted with its controller: remove the account (which drops its connection). */
  private async removeIfDeleted(serial: string): Promise<void> {
    try {
      const row = await this.o.models.Controller.findOne({ where: { serial }, attributes: ['id'] });
      if (row) return;
      await this.dynsec.command('deleteClient', { username: serial }).catch((err: unknown) => {
        if (!(err instanceof DynsecError && err.reason === 'Client not found')) throw err;
      });
      await this.dynsec.command('deleteRole', { rolename: roleOf(serial) }).catch(() => undefined);
    } catch (err) {
      this.o.logger.warn({ serial, err: (err as Error).message }, 'mosquitto account of a deleted controller not removed');
    }
  }

  /** Creates the role and client, or brings existing ones to the given secret, client id and rules. */
  private async ensureAccount(a: ServiceAccount, rolename: string, acls: Acl[]): Promise<void> {
    const d = this.dynsec;
    const exists = (err: unknown) => err instanceof DynsecError && /already exists/i.test(err.reason);
    try {
      await d.command('createRole', { rolename, acls });
    } catch (err) {
      if (!exists(err)) throw err;
      for (const acl of acls) await d.command('addRoleACL', { rolename, ...acl }).catch((e: unknown) => (exists(e) ? undefined : Promise.reject(e)));
    }
    try {
      await d.command('createClient', { username: a.username, password: a.password, clientid: a.clientId, roles: [{ rolename }] });
    } catch (err) {
      if (!exists(err)) throw err;
      await d.command('setClientId', { username: a.username, clientid: a.clientId });
      const info = (await d.command('getClient', { username: a.username })) as { client?: { roles?: Array<{ rolename?: unknown }> } } | undefined;
      // The plugin answers "Internal error" to adding a role the client already has: ask first.
      if (!info?.client?.roles?.some((r) => r.rolename === rolename)) await d.command('addClientRole', { username: a.username, rolename });
      await d.command('setClientPassword', { username: a.username, password: a.password });
      await d.command('enableClient', { username: a.username });
    }
  }

  /** Disconnects from the control topic. */
  async stop(): Promise<void> {
    this.o.bus.off('controllerRevoked', this.onRevoked);
    await this.dynsec.stop();
  }
}

/** Connects to the project's mosquitto at MQTT_HOST:MQTT_PORT as the account manager and sets up the service accounts. */
export async function startMosquittoAccounts(config: Config, deps: { models: Models; bus: EventBus; logger: Logger }): Promise<MosquittoAccounts> {
  const dir = config.MOSQUITTO_DIR ?? path.join(config.DATA_DIR, 'mosquitto');
  const accounts = new MosquittoAccounts({
    url: `mqtt://${config.MQTT_HOST}:${config.MQTT_PORT}`,
    adminPassword: readAdminSecret(dir),
    ingest: { username: config.MQTT_INGEST_USER, password: config.MQTT_INGEST_PASSWORD, clientId: config.MQTT_INGEST_CLIENT_ID },
    workers: config.INGEST_WORKERS > 1 ? Array.from({ length: config.INGEST_WORKERS }, (_, i) => workerAccount(config, i + 1)) : [],
    sim: config.DEMO_MODE ? { username: config.MQTT_SIM_USER, password: config.MQTT_SIM_PASSWORD, clientId: config.MQTT_SIM_CLIENT_ID } : null,
    demoFleetFile: config.DEMO_MODE ? path.join(config.DATA_DIR, 'demo-controllers.json') : null,
    ...deps,
  });
  await accounts.start();
  return accounts;
}
