/**
 * The project's own mosquitto (MQTT_BROKER=mosquitto): installs Debian's mosquitto when missing,
 * writes a configuration into its data directory (loopback listener, no anonymous clients, the
 * dynamic-security plugin, periodic persistence), and runs the broker as a child of the starter.
 * Debian's system service (mosquitto.service) is never started or touched.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { existsSync, mkdirSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import net from 'node:net';
import os from 'node:os';
import path from 'node:path';
import { pidAlive, portOpen } from './ports';
import { ensureAdminSecret, initialDynsecJson, mosquittoPaths } from '../../server/mqtt/mosquittoFiles';
import type { Config } from '../../server/config';

export interface MosquittoOptions {
  /** Absolute data directory, e.g. <project>/.data/mosquitto. */
  dataDir: string;
  /** Loopback port to listen on; 0 picks a free one. */
  port: number;
  /** Largest MQTT packet accepted, bytes (MQTT_MAX_PACKET_BYTES). */
  maxPacketBytes: number;
  /** Open connections at most (MQTT_MAX_CONNECTIONS). */
  maxConnections: number;
  /** QoS 1 messages queued per session at most (MQTT_INGEST_QUEUE_LIMIT): the ingest's offline queue. */
  maxQueuedMessages: number;
  /** Seconds between saves of the in-memory state to disk (MOSQUITTO_AUTOSAVE_S). */
  autosaveS: number;
  log?: (line: string) => void;
}

const MOSQUITTO_CANDIDATES = ['/usr/sbin/mosquitto', '/usr/bin/mosquitto'];

/** Path of the mosquitto binary, or null when it is not installed. */
export function findMosquitto(): string | null {
  for (const p of MOSQUITTO_CANDIDATES) if (existsSync(p)) return p;
  const which = spawnSync('sh', ['-c', 'command -v mosquitto'], { encoding: 'utf8' });
  const found = which.stdout.trim();
  return found.length > 0 ? found : null;
}

/** Path of Debian's dynamic-security plugin, or null. */
export function findDynsecPlugin(): string | null {
  const libRoots = ['/usr/lib', '/usr/lib64', '/usr/local/lib'];
  for (const root of libRoots) {
    const direct = path.join(root, 'mosquitto_dynamic_security.so');
    if (existsSync(direct)) return direct;
    let entries: string[] = [];
    try {
      entries = readdirSync(root);
    } catch {
      continue;
    }
    // Debian puts it under the multiarch directory, e.g. /usr/lib/x86_64-linux-gnu.
    for (const e of entries) {
      const p = path.join(root, e, 'mosquitto_dynamic_security.so');
      if (existsSync(p)) return p;
    }
  }
  return null;
}

/** Installs Debian's mosquitto when missing (root only, like MariaDB); returns the binary path. */
export function ensureMosquittoInstalled(log: (l: string) => void = console.log): string {
  const existing = findMosquitto();
  if (existing) return existing;
  if (typeof process.getuid === 'function' && process.getuid() !== 0) {
    throw new Error('MQTT_BROKER=mosquitto but mosquitto is not installed and this user cannot install it. Install it with\n  sudo apt-get install -y mosquitto\nor set MQTT_BROKER=embedded.');
  }
  log('mosquitto not found: installing mosquitto from Debian packages (apt-get)…');
  const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' };
  // The package would start Debian's system service on 1883; a policy-rc.d answering 101 ("not
  // allowed", Debian's invoke-rc.d policy interface) keeps it stopped. Only when none exists.
  const policy = '/usr/sbin/policy-rc.d';
  const ownPolicy = !existsSync(policy);
  if (ownPolicy) writeFileSync(policy, '#!/bin/sh\n# written by Rimehold while installing mosquitto\nexit 101\n', { mode: 0o755 });
  try {
    for (const args of [['update', '-qq'], ['install', '-y', '-qq', '--no-install-recommends', 'mosquitto']]) {
      const r = spawnSync('apt-get', args, { stdio: 'inherit', env });
      if (r.status !== 0) throw new Error(`apt-get ${args.join(' ')} failed with status ${r.status}`);
    }
  } finally {
    if (ownPolicy) rmSync(policy, { force: true });
  }
  const bin = findMosquitto();
  if (!bin) throw new Error('mosquitto was installed but its binary was not found');
  return bin;
}

/**
 * The configuration we run mosquitto with. Persistence is periodic: mosquitto writes its whole
 * state every `autosave_interval` seconds and at a clean stop, not per message, so a crash loses
 * what arrived since the last save (see docs/device-protocol.md, "Broker").
 */
export function mosquittoConfig(o: MosquittoOptions & { port: number; pluginPath: string }): string {
  const p = mosquittoPaths(o.dataDir);
  return [
    '# Written by scripts/lib/mosquitto.ts at every start; edits are overwritten.',
    'per_listener_settings false',
    `listener ${o.port} 127.0.0.1`,
    `max_connections ${o.maxConnections}`,
    'allow_anonymous false',
    `plugin ${o.pluginPath}`,
    `plugin_opt_config_file ${p.dynsec}`,
    'persistence true',
    `persistence_location ${p.persistenceLocation}`,
    `persistence_file ${p.persistenceFile}`,
    `autosave_interval ${o.autosaveS}`,
    'autosave_on_changes false',
    `max_packet_size ${o.maxPacketBytes}`,
    // The ingest's offline queue: messages beyond it would be dropped, so it is as large as the
    // embedded broker's ingest queue bound; bytes are not limited separately.
    `max_queued_messages ${o.maxQueuedMessages}`,
    'max_queued_bytes 0',
    // Unacknowledged deliveries per client: the ingest acknowledges after its commit, so a whole
    // batch (1,000 by default) must be able to be in flight at once.
    'max_inflight_messages 1000',
    `pid_file ${p.pidFile}`,
    `log_dest file ${p.log}`,
    'log_type error',
    'log_type warning',
    'log_type notice',
    'connection_messages false',
    // As root mosquitto would switch to the `mosquitto` user, which cannot write this directory.
    `user ${os.userInfo().username}`,
    '',
  ].join('\n');
}

function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const srv = net.createServer();
    srv.once('error', reject);
    srv.listen(0, '127.0.0.1', () => {
      const port = (srv.address() as net.AddressInfo).port;
      srv.close(() => resolve(port));
    });
  });
}

/** A project-local mosquitto: start, stop, and where it listens. */
export class MosquittoInstance {
  private child: ChildProcess | null = null;
  /** True when this process started mosquitto (and so must stop it). */
  ownsProcess = false;
  /** The port it listens on (known after start). */
  port = 0;
  private readonly log: (l: string) => void;

  constructor(readonly opts: MosquittoOptions) {
    this.log = opts.log ?? ((l) => console.log(l));
  }

  get paths() {
    return mosquittoPaths(this.opts.dataDir);
  }

  /** The pid of a running mosquitto on this data directory, if any. */
  runningPid(): number | null {
    if (!existsSync(this.paths.pidFile)) return null;
    const pid = Number(readFileSync(this.paths.pidFile, 'utf8').trim());
    return Number.isInteger(pid) && pid > 0 && pidAlive(pid) ? pid : null;
  }

  /** Writes the configuration (and the dynamic-security file once), then starts mosquitto unless it already runs here. */
  async start(): Promise<number> {
    const bin = ensureMosquittoInstalled(this.log);
    const plugin = findDynsecPlugin();
    if (!plugin) throw new Error('mosquitto_dynamic_security.so not found: the mosquitto package should ship it (dpkg -L mosquitto)');
    const p = this.paths;
    mkdirSync(p.dir, { recursive: true, mode: 0o700 });
    const adminSecret = ensureAdminSecret(p.dir);
    // The plugin owns this file after the first start (it saves every change): written only once.
    if (!existsSync(p.dynsec)) writeFileSync(p.dynsec, initialDynsecJson(adminSecret), { mode: 0o600 });
    // A restart keeps the port it had, so clients can reconnect to the same address.
    const wanted = this.port || this.opts.port;
    if (wanted !== 0 && this.runningPid() !== null && (await portOpen(wanted))) {
      this.log(`reusing the mosquitto already running on 127.0.0.1:${wanted}`);
      this.port = wanted;
      return wanted;
    }
    if (wanted !== 0 && (await portOpen(wanted))) throw new Error(`port ${wanted} is taken by another program; set MQTT_PORT to a free port`);
    const port = wanted === 0 ? await freePort() : wanted;
    writeFileSync(p.config, mosquittoConfig({ ...this.opts, port, pluginPath: plugin }), { mode: 0o600 });
    this.child = spawn(bin, ['-c', p.config], { stdio: ['ignore', 'ignore', 'pipe'], detached: false });
    let stderr = '';
    this.child.stderr?.on('data', (d: Buffer) => {
      stderr = (stderr + d.toString()).slice(-2000);
    });
    this.child.unref();
    this.ownsProcess = true;
    const exited = new Promise<number | null>((resolve) => this.child?.once('exit', (code) => resolve(code)));
    const deadline = Date.now() + 20_000;
    while (Date.now() < deadline) {
      if (await portOpen(port)) {
        this.port = port;
        this.log(`mosquitto listening on 127.0.0.1:${port} (data in ${p.dir})`);
        return port;
      }
      const raced = await Promise.race([exited, new Promise((r) => setTimeout(() => r('wait'), 100))]);
      if (raced !== 'wait') throw new Error(`mosquitto exited during start (code ${String(raced)}): ${stderr.trim()} (see ${p.log})`);
    }
    throw new Error(`mosquitto did not listen on ${port} within 20 s; see ${p.log}`);
  }

  /** Stops mosquitto if this process (or, with force, anyone) started it; a clean stop saves its state. */
  async stop(force = false): Promise<void> {
    if (!this.ownsProcess && !force) return;
    const pid = this.runningPid() ?? this.child?.pid;
    this.child = null;
    if (!pid || !pidAlive(pid)) return;
    process.kill(pid, 'SIGTERM');
    const deadline = Date.now() + 20_000;
    while (pidAlive(pid) && Date.now() < deadline) await new Promise((r) => setTimeout(r, 50));
    if (pidAlive(pid)) process.kill(pid, 'SIGKILL');
  }

  /** Kills mosquitto with SIGKILL (no save): what a crash does. Tests only. */
  async crash(): Promise<void> {
    const pid = this.runningPid() ?? this.child?.pid;
    this.child = null;
    if (!pid) return;
    process.kill(pid, 'SIGKILL');
    while (pidAlive(pid)) await new Promise((r) => setTimeout(r, 20));
  }
}

/** The instance a config asks for (MQTT_BROKER=mosquitto): its data directory, port and limits. */
export function mosquittoFromConfig(config: Config, log?: (l: string) => void): MosquittoInstance {
  return new MosquittoInstance({
    dataDir: config.MOSQUITTO_DIR ?? path.join(config.DATA_DIR, 'mosquitto'),
    port: config.MQTT_PORT,
    maxPacketBytes: config.MQTT_MAX_PACKET_BYTES,
    maxConnections: config.MQTT_MAX_CONNECTIONS,
    maxQueuedMessages: config.MQTT_INGEST_QUEUE_LIMIT,
    autosaveS: config.MOSQUITTO_AUTOSAVE_S,
    log,
  });
}

/**
 * With MQTT_BROKER=mosquitto: starts the instance and returns the config with the port it listens
 * on (MQTT_PORT=0 picks a free one); otherwise the config unchanged and no instance.
 */
export async function startConfiguredMosquitto(config: Config, log?: (l: string) => void): Promise<{ config: Config; mosquitto: MosquittoInstance | null }> {
  if (config.MQTT_BROKER !== 'mosquitto') return { config, mosquitto: null };
  const mosquitto = mosquittoFromConfig(config, log);
  const port = await mosquitto.start();
  return { config: { ...config, MQTT_PORT: port }, mosquitto };
}
