/**
 * npm run bench:ingest — the telemetry pipeline's throughput and latency, measured on this machine
 * in one run together with the two ceilings it is bounded by:
 *   1. MariaDB alone: driver batch() inserts of 1000 rows into a copy of the readings table;
 *   2. broker alone: QoS 1 publishes through the embedded broker (same persistence and ACL) to one
 *      subscriber that does no work;
 *   3. the pipeline: the real server (broker → ingest → MariaDB → WebSocket) with many lightweight
 *      controller connections, run twice against two server starts, with alarm evaluation on
 *      (ALARMS_ENABLED=1) and off (=0), and the on/off ratio of the sustained rates (goal ≥ 0.9);
 *      then the count check over both runs: published = stored, none stored twice.
 * Everything runs on 127.0.0.1 with its own MariaDB instance (.data/mariadb-bench).
 * The pipeline is driven open-loop at rising offered rates (BENCH_RATES, msg/s) until it stops keeping up.
 * Options: BENCH_SECONDS per step (default 10), BENCH_CONTROLLERS (default 400), BENCH_WINDOW (broker-alone
 * in-flight per connection, default 4), BENCH_PERSISTENCE=memory to see what the durable broker store costs,
 * BENCH_ALARM_ORDER (default on,off) to swap the order of the two pipeline runs, BENCH_MODES (default
 * inline,process,mosquitto: the embedded broker in the server's loop or in its own process
 * (MQTT_EMBEDDED_IN), or Debian's mosquitto with BENCH_WORKERS ingest workers (default 2, INGEST_WORKERS);
 * mosquitto is left out when it is not installed) — each mode gets both alarm runs. With mosquitto
 * the broker-alone ceiling is measured for it too, with the same publishers and a null subscriber.
 * Every step also prints CPU seconds per 1,000 stored readings of each component: the load generator
 * (its publishing, as it reports it), the server process (this process: HTTP, ingest, WebSocket hub,
 * and the broker too when inline), the broker process (when separate) and mariadbd, from
 * /proc/<pid>/stat utime+stime read before and after the step.
 */
import { spawn, spawnSync } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { mkdtempSync, readFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import mariadb from 'mariadb';
import mqtt from 'mqtt';
import { QueryTypes } from 'sequelize';
import { MariaInstance } from '../lib/mariadb';
import { firstFreePort } from '../lib/ports';
import { findMosquitto, MosquittoInstance } from '../lib/mosquitto';
import { projectRootFrom } from '../lib/root';

process.env.TZ = 'UTC';
const root = projectRootFrom(import.meta.url, 2);
const SECONDS = Number(process.env.BENCH_SECONDS ?? 10);
const CONTROLLERS = Number(process.env.BENCH_CONTROLLERS ?? 400);
const WINDOW = Number(process.env.BENCH_WINDOW ?? 4);
const RATES = (process.env.BENCH_RATES ?? '1000,2000,4000,6000,8000,10000,12000,15000').split(',').map(Number);
const WORKERS = Number(process.env.BENCH_WORKERS ?? 2);
/** Order of the two pipeline runs (alarm evaluation on, off); 'off,on' to see whether the order matters. */
const ALARM_ORDER = (process.env.BENCH_ALARM_ORDER ?? 'on,off').split(',').map((v) => {
  if (v !== 'on' && v !== 'off') throw new Error(`BENCH_ALARM_ORDER: expected on,off or off,on, got ${process.env.BENCH_ALARM_ORDER}`);
  return v === 'on';
});
if (ALARM_ORDER.length !== 2 || ALARM_ORDER[0] === ALARM_ORDER[1]) throw new Error('BENCH_ALARM_ORDER must name on and off once each');
/** Where the embedded broker runs in the pipeline runs (MQTT_EMBEDDED_IN), in this order. */
type Mode = 'inline' | 'process' | 'mosquitto';
const MODES: Mode[] = (process.env.BENCH_MODES ?? (findMosquitto() ? 'inline,process,mosquitto' : 'inline,process')).split(',').map((v) => {
  if (v !== 'inline' && v !== 'process' && v !== 'mosquitto') throw new Error(`BENCH_MODES: expected some of inline,process,mosquitto, got ${process.env.BENCH_MODES}`);
  return v;
});
const modeKey = (m: Mode) => (m === 'inline' ? 'brokerInline' : m === 'process' ? 'brokerProcess' : `mosquittoWorkers${WORKERS}`);
/** The goal for mosquitto with two ingest workers: sustained (p99 < 250 ms) readings/s. */
const MOSQUITTO_GOAL_PER_S = 15_000;
/** The goals for the embedded broker: sustained (p99 < 250 ms) readings/s, and its share of the broker alone. */
const EMBEDDED_GOAL_PER_S = 8000;
const EMBEDDED_GOAL_RATIO = 0.6;
/** Clock ticks per second of /proc/<pid>/stat (getconf CLK_TCK; 100 on Linux builds). */
const CLK_TCK = Number(spawnSync('getconf', ['CLK_TCK'], { encoding: 'utf8' }).stdout.trim()) || 100;

/** CPU seconds (user + system) a process has used so far, or NaN when it is gone. */
function cpuSeconds(pid: number | null | undefined): number {
  if (!pid) return NaN;
  try {
    const stat = readFileSync(`/proc/${pid}/stat`, 'utf8');
    // Fields after the command name (which may hold spaces): state is field 3, utime 14, stime 15.
    const f = stat.slice(stat.lastIndexOf(')') + 2).split(' ');
    return (Number(f[11]) + Number(f[12])) / CLK_TCK;
  } catch {
    return NaN;
  }
}

/** CPU seconds per 1,000 readings, 3 decimals; null when not measured. */
const per1k = (cpuS: number, readings: number): number | null => (Number.isFinite(cpuS) && readings > 0 ? Number(((cpuS / readings) * 1000).toFixed(3)) : null);
/** The goal: the sustained rate with alarm evaluation on keeps at least 90 % of it off. */
const ALARM_GOAL_RATIO = 0.9;

/** Runs load.ts; onReady is called once when it prints `ready` (ws mode) or `connected` (publish mode, all connections up). */
function runLoad(argv: string[], onReady?: () => void): Promise<Record<string, unknown>> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, [path.join(root, 'node_modules', 'tsx', 'dist', 'cli.mjs'), path.join(root, 'scripts', 'bench', 'load.ts'), ...argv], {
      stdio: ['ignore', 'pipe', 'inherit'],
      env: { ...process.env, TZ: 'UTC' },
    });
    let out = '';
    child.stdout.on('data', (d: Buffer) => {
      out += d.toString();
      if (onReady && (out.includes('ready\n') || out.includes('connected\n'))) {
        const cb = onReady;
        onReady = undefined;
        cb();
      }
    });
    child.on('exit', (code) => {
      const last = out.trim().split('\n').pop() ?? '';
      if (code !== 0) return reject(new Error(`load generator exited ${code}`));
      resolve(JSON.parse(last) as Record<string, unknown>);
    });
  });
}

const port = await firstFreePort(3310);
const db = { name: 'rimehold_bench', user: 'rimehold_bench', password: randomBytes(18).toString('base64url') };
const instance = new MariaInstance({ dataDir: path.join(root, '.data', `mariadb-bench-${port}`), port, bufferPoolMiB: 1024, redoLogMiB: 512, log: () => {} });
await instance.start();
instance.ensureAppDatabase(db);
instance.resetDatabase(db.name);
Object.assign(process.env, {
  NODE_ENV: 'test', DB_HOST: '127.0.0.1', DB_PORT: String(port), DB_NAME: db.name, DB_USER: db.user, DB_PASSWORD: db.password, DB_EXTERNAL: '1',
  PORT: '0', MQTT_PORT: '0', SMTP_FAKE: '0', LOG_LEVEL: 'warn', DEMO_MODE: '0', SESSION_SECRET: randomBytes(24).toString('base64url'),
  MQTT_PERSISTENCE_DIR: mkdtempSync(path.join(os.tmpdir(), 'rimehold-bench-broker-')),
  MQTT_PERSISTENCE: process.env.BENCH_PERSISTENCE ?? 'journal',
});

const { loadConfig } = await import('../../server/config');
const { createSequelize } = await import('../../server/db/sequelize');
const { migrateUp } = await import('../../server/db/migrate');
const { startServer } = await import('../../server/main');
const { hashDeviceSecret } = await import('../../server/controllers/secrets');
const { hashSecret } = await import('../../server/auth/passwords');
const { sqlTs } = await import('../../server/db/sequelize');
const { EmbeddedBroker } = await import('../../server/mqtt/broker');
const { EventBus } = await import('../../server/events/bus');
const { createTelemetryMetrics } = await import('../../server/telemetry/metrics');
const { initModels } = await import('../../server/models');
const { createLogger } = await import('../../server/logger');
const { startMosquittoAccounts } = await import('../../server/mqtt/mosquittoAccounts');
const config = loadConfig();
const results: Record<string, unknown> = { brokerPersistence: config.MQTT_PERSISTENCE, machine: `${os.cpus().length} cores, ${Math.round(os.totalmem() / 2 ** 30)} GiB`, seconds: SECONDS, controllers: CONTROLLERS };

let mosquitto: MosquittoInstance | null = null;
try {
  const sequelize = createSequelize(config);
  await migrateUp(sequelize);
  await sequelize.close();

  // 1. MariaDB alone.
  {
    const pool = mariadb.createPool({ host: '127.0.0.1', port, user: db.user, password: db.password, database: db.name, connectionLimit: 2 });
    await pool.query('CREATE TABLE bench_rows LIKE readings');
    await pool.query('ALTER TABLE bench_rows REMOVE PARTITIONING');
    const t0 = performance.now();
    let rows = 0;
    const base = Date.now() - 3_600_000;
    while (performance.now() - t0 < 5000) {
      const batch = Array.from({ length: 1000 }, (_, i) => {
        const n = rows + i;
        return [n % 1000, sqlTs(base + Math.floor(n / 1000) * 10), String(n), sqlTs(base), 'R-448A', String(2.5), String(250), String(-2), String(-9.1), String(7.1), null, null, null, null, null, 700, String(43.75), 1, 1, 0, 0, null, null];
      });
      // Columns named, as the writer names them: the readings table grows (quality flags, glide).
      await pool.batch(
        'INSERT INTO bench_rows (box_id, ts, seq, received_at, refrigerant, box_air_c, suction_kpa_g, suction_line_c, saturated_suction_c, superheat_k, coil_inlet_c, discharge_air_c, liquid_kpa_g, liquid_line_c, subcooling_k, valve_steps, valve_percent, compressor_on, fan_on, defrost_on, door_open, quality_flags, glide_k) VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)',
        batch,
      );
      rows += 1000;
    }
    const s = (performance.now() - t0) / 1000;
    results.dbAloneRowsPerS = Math.round(rows / s);
    await pool.query('DROP TABLE bench_rows');
    await pool.end();
  }

  // Provision the bench fleet straight through the models: each pipeline run starts its own server.
  const fleetDb = createSequelize(config);
  const models = initModels(fleetDb);
  const logger = createLogger(config.LOG_LEVEL);
  const customer = await models.Customer.create({ name: 'Bench Customer', contactName: null, contactEmail: null, contactPhone: null, notes: null });
  const site = await models.Site.create({ customerId: customer.id, name: 'Bench Site', address: null, timeZone: 'UTC', elevationM: 0 });
  const secret = 'bench-secret-' + randomBytes(8).toString('hex');
  const creds: Array<{ serial: string; secret: string }> = [];
  for (let i = 0; i < CONTROLLERS; i++) {
    const box = await models.Box.create({
      siteId: site.id, customerId: customer.id, name: `Bench box ${i}`, kind: 'cooler', setpointC: 2, differentialK: 1.5, highLimitC: 5, lowLimitC: 0, alarmDelayMin: 45, doorAlarmDelayMin: 5,
      refrigerant: 'R-448A', valveType: 'eev', saturationMethod: 'pressure', superheatTargetK: 3.3, defrostType: 'off-cycle', defrostIntervalH: 6, defrostMaxMin: 40, defrostTerminationC: 5, dripMin: 2, fanDelayMin: 0,
    });
    const serial = `B${String(i).padStart(5, '0')}`;
    await models.Controller.create({ boxId: box.id, serial, secretHash: hashDeviceSecret(secret), valveFullSteps: 1600, firmware: null, lastSeenAt: null, secretRotatedAt: null });
    creds.push({ serial, secret });
  }
  await models.User.create({ email: 'bench-admin@bench.example.com', name: 'Bench Admin', role: 'admin', customerId: null, passwordHash: await hashSecret('bench-password-1'), inviteTokenHash: null, inviteExpiresAt: null, invitedAt: null, lastLoginAt: null, lockedUntil: null });

  // 2. Broker alone: a second embedded broker (same persistence and ACL) with one subscriber that does nothing.
  {
    const alone = new EmbeddedBroker({
      host: '127.0.0.1', port: 0, persistenceDir: mkdtempSync(path.join(os.tmpdir(), 'rimehold-bench-alone-')), ingestUser: config.MQTT_INGEST_USER, ingestPassword: config.MQTT_INGEST_PASSWORD,
      ingestClientId: 'rimehold-null-sub', simUser: null, simPassword: null, ingestQueueLimit: 1e9, persistence: config.MQTT_PERSISTENCE, models, bus: new EventBus(), metrics: createTelemetryMetrics(false), logger,
    });
    const alonePort = await alone.start();
    const sub = await mqtt.connectAsync(`mqtt://127.0.0.1:${alonePort}`, { clientId: 'rimehold-null-sub', username: config.MQTT_INGEST_USER, password: config.MQTT_INGEST_PASSWORD, clean: false, protocolVersion: 4 });
    let received = 0;
    let lastAt = 0;
    sub.on('message', () => {
      received++;
      lastAt = Date.now();
    });
    await sub.subscribeAsync({ 'rimehold/v1/ctl/+/telemetry': { qos: 1 } });
    let selfCpu0 = NaN;
    const r = await runLoad(['--mode=publish', `--url=mqtt://127.0.0.1:${alonePort}`, `--creds=${JSON.stringify(creds)}`, `--seconds=${Math.min(10, SECONDS)}`, `--window=${WINDOW}`, '--committed=0'], () => (selfCpu0 = cpuSeconds(process.pid)));
    const total = Number(r.total);
    const deadline = performance.now() + 30_000;
    while (received < total && performance.now() < deadline) await new Promise((res) => setTimeout(res, 50));
    results.brokerAloneMsgPerS = Math.round(received / ((lastAt - Number(r.startedAt)) / 1000));
    results.brokerAloneDelivered = `${received}/${total}`;
    // The broker alone runs in this process with its null subscriber.
    results.brokerAloneCpuSPer1kMsgs = { load: per1k(Number(r.cpuS), received), brokerAndSubscriber: per1k(cpuSeconds(process.pid) - selfCpu0, received) };
    await sub.endAsync();
    await alone.stop();
  }

  // 2b. mosquitto alone (BENCH_MODES has mosquitto): its own data dir, the bench fleet's accounts made
  // through the dynamic-security plugin, the same publishers and a null subscriber on the ingest account.
  const mosquittoDir = mkdtempSync(path.join(os.tmpdir(), 'rimehold-bench-mosquitto-'));
  if (MODES.includes('mosquitto')) {
    mosquitto = new MosquittoInstance({ dataDir: mosquittoDir, port: 0, maxPacketBytes: 8192, maxConnections: 10_000, maxQueuedMessages: 2_000_000, autosaveS: 10, log: () => {} });
    const mport = await mosquitto.start();
    const mconfig = loadConfig({ ...process.env, MQTT_BROKER: 'mosquitto', MQTT_PORT: String(mport), MOSQUITTO_DIR: mosquittoDir, INGEST_WORKERS: String(WORKERS) });
    // Its start warns that the fleet has no accounts yet (they are made next): not part of the output.
    const accounts = await startMosquittoAccounts(mconfig, { models, bus: new EventBus(), logger: createLogger('error') });
    for (const c of creds) await accounts.provision(c.serial, c.secret);
    await accounts.stop();
    const url = `mqtt://127.0.0.1:${mport}`;
    // A client id of its own (the ingest's is pinned to it): a null subscriber on the ingest account's rules.
    const sub = await mqtt.connectAsync(url, { clientId: config.MQTT_INGEST_CLIENT_ID, username: config.MQTT_INGEST_USER, password: config.MQTT_INGEST_PASSWORD, clean: true, protocolVersion: 4 });
    let received = 0;
    let lastAt = 0;
    sub.on('message', () => {
      received++;
      lastAt = Date.now();
    });
    await sub.subscribeAsync({ 'rimehold/v1/ctl/+/telemetry': { qos: 1 } });
    let cpu0 = NaN;
    const r = await runLoad(['--mode=publish', `--url=${url}`, `--creds=${JSON.stringify(creds)}`, `--seconds=${Math.min(10, SECONDS)}`, `--window=${WINDOW}`, '--committed=0'], () => (cpu0 = cpuSeconds(mosquitto?.runningPid())));
    const total = Number(r.total);
    const deadline = performance.now() + 30_000;
    while (received < total && performance.now() < deadline) await new Promise((res) => setTimeout(res, 50));
    results.mosquittoAloneMsgPerS = Math.round(received / ((lastAt - Number(r.startedAt)) / 1000));
    results.mosquittoAloneDelivered = `${received}/${total}`;
    results.mosquittoAloneCpuSPer1kMsgs = { load: per1k(Number(r.cpuS), received), mosquitto: per1k(cpuSeconds(mosquitto.runningPid()) - cpu0, received) };
    await sub.endAsync();
  }

  // 3. The pipeline, once per broker mode and alarm setting, each against its own server start (same
  // database, same fleet, a fresh broker store). Seqs never repeat across runs, so the count check at
  // the end holds over all runs together.
  const published: Record<string, number> = {};
  let totalPublished = 0;

  const mariadbPid = instance.runningPid();

  /** One pipeline run: the rising-rate steps against a server started with ALARMS_ENABLED on or off and the broker inline or in its own process. */
  const pipelineRun = async (alarmsOn: boolean, runIndex: number, mode: Mode): Promise<Record<string, unknown>> => {
    const brokerEnv =
      mode === 'mosquitto'
        ? { MQTT_BROKER: 'mosquitto', MQTT_PORT: String(mosquitto?.port ?? 0), MOSQUITTO_DIR: mosquittoDir, INGEST_WORKERS: String(WORKERS) }
        : { MQTT_EMBEDDED_IN: mode, MQTT_PERSISTENCE_DIR: mkdtempSync(path.join(os.tmpdir(), 'rimehold-bench-broker-')) };
    const runConfig = loadConfig({ ...process.env, ALARMS_ENABLED: alarmsOn ? '1' : '0', ...brokerEnv });
    const srv = await startServer(runConfig, { batchSize: 1000, batchWindowMs: 25 });
    const out: Record<string, unknown> = mode === 'mosquitto' ? { broker: 'mosquitto', ingestWorkers: WORKERS, alarmsEnabled: alarmsOn } : { brokerIn: mode, alarmsEnabled: alarmsOn };
    const brokerPid = () => (mode === 'mosquitto' ? (mosquitto?.runningPid() ?? null) : srv.broker && 'pid' in srv.broker ? (srv.broker as { pid: number | null }).pid : null);
    /** CPU seconds of the ingest workers together (NaN when one was replaced meanwhile or none run). */
    const workersCpu = (pids: Array<number | null>) => (pids.length ? pids.reduce<number>((a, p) => a + cpuSeconds(p), 0) : NaN);
    try {
      if ((srv.alarms !== null) !== alarmsOn) throw new Error(`ALARMS_ENABLED=${alarmsOn ? 1 : 0} but the alarm service is ${srv.alarms ? 'running' : 'not running'}`);
      const mqttUrl = srv.mqttUrl ?? '';
      const pre = await fetch(`${srv.url}/api/v1/auth/csrf`);
      const preCookie = (pre.headers.get('set-cookie') ?? '').split(';')[0] ?? '';
      const { csrfToken } = (await pre.json()) as { csrfToken: string };
      const login = await fetch(`${srv.url}/api/v1/auth/login`, { method: 'POST', headers: { 'content-type': 'application/json', cookie: preCookie, 'x-csrf-token': csrfToken }, body: JSON.stringify({ email: 'bench-admin@bench.example.com', password: 'bench-password-1' }) });
      if (login.status !== 200) throw new Error(`bench sign-in failed: ${login.status} ${await login.text()}`);
      const cookie = (login.headers.get('set-cookie') ?? '').split(';')[0] ?? '';
      const count = async () => Number((await srv.ctx.sequelize.query<{ n: number }>('SELECT COUNT(*) AS n FROM readings', { type: QueryTypes.SELECT }))[0]?.n ?? 0);
      const seqOffset = runIndex * 100_000_000;

      /** One phase: a WebSocket client, the publishers (closed loop, or open loop at `rate`), then wait until all is stored. */
      const phase = async (label: string, rate: number, seqBase: number) => {
        let wsReady: () => void = () => {};
        const ready = new Promise<void>((res) => (wsReady = res));
        const wsDone = runLoad(['--mode=ws', `--url=${srv.url.replace('http://', 'ws://')}/ws`, `--cookie=${cookie}`, `--seconds=${SECONDS + 20}`], () => wsReady());
        await ready;
        const before = await count();
        // CPU snapshots once the publishers are connected (sign-in is not part of the figures).
        const pidAtStart = brokerPid();
        const workerPids = srv.ingestWorkers?.pids ?? [];
        let cpu0 = { server: NaN, broker: NaN, mariadbd: NaN, workers: NaN };
        const r = await runLoad(['--mode=publish', `--url=${mqttUrl}`, `--creds=${JSON.stringify(creds)}`, `--seconds=${SECONDS}`, `--window=${WINDOW}`, `--rate=${rate}`, `--seq-base=${seqOffset + seqBase}`], () => {
          cpu0 = { server: cpuSeconds(process.pid), broker: cpuSeconds(pidAtStart), mariadbd: cpuSeconds(mariadbPid), workers: workersCpu(workerPids) };
        });
        const endedAt = Date.now();
        const atEnd = (await count()) - before;
        const total = Number(r.total);
        for (const [k, v] of Object.entries(r.published as Record<string, number>)) published[k] = v;
        totalPublished += total;
        const deadline = Date.now() + 120_000;
        let stored = (await count()) - before;
        let lastChange = Date.now();
        while (stored < total && Date.now() < deadline) {
          await new Promise((res) => setTimeout(res, 50));
          const n = (await count()) - before;
          if (n !== stored) lastChange = Date.now();
          stored = n;
        }
        const samePids = (srv.ingestWorkers?.pids ?? []).every((p, i) => p === workerPids[i]);
        const cpu1 = { server: cpuSeconds(process.pid), broker: brokerPid() === pidAtStart ? cpuSeconds(pidAtStart) : NaN, mariadbd: cpuSeconds(mariadbPid), workers: samePids ? workersCpu(workerPids) : NaN };
        const startedAt = Number(r.startedAt);
        const wsr = await wsDone;
        out[label] = {
          offeredPerS: rate || 'as fast as acknowledged',
          published: total,
          publishedPerS: Math.round(total / Number(r.elapsed)),
          storedDuringLoadPerS: Math.round(atEnd / ((endedAt - startedAt) / 1000)),
          storedPerS: Math.round(stored / ((lastChange - startedAt) / 1000)),
          stored,
          wsReceived: wsr.received,
          // The `committed` messages the publishers heard while publishing (one per controller per commit).
          committedMessages: Number(r.committedMessages ?? 0),
          latencyP50Ms: wsr.p50,
          latencyP99Ms: wsr.p99,
          // From the publishers connected until all is stored; load = the publishers (the WebSocket client is apart).
          cpuSPer1kReadings: {
            load: per1k(Number(r.cpuS), stored),
            wsClient: per1k(Number(wsr.cpuS), stored),
            server: per1k(cpu1.server - cpu0.server, stored),
            broker: pidAtStart ? per1k(cpu1.broker - cpu0.broker, stored) : 'in the server process',
            ...(workerPids.length ? { ingestWorkers: per1k(cpu1.workers - cpu0.workers, stored) } : {}),
            mariadbd: per1k(cpu1.mariadbd - cpu0.mariadbd, stored),
          },
        };
      };

      // Open-loop steps of rising offered rate until the pipeline stops keeping up.
      // Warm-up (box lookups, JIT; rule engines with alarms on); not part of the figures.
      await phase('warmup', 500, 5_000_000);
      const steps: Array<Record<string, unknown>> = [];
      for (const [i, rate] of RATES.entries()) {
        await phase(`rate${rate}`, rate, (i + 1) * 10_000_000);
        const r = out[`rate${rate}`] as { publishedPerS: number; storedDuringLoadPerS: number; latencyP99Ms: number | null };
        steps.push(r);
        if (r.storedDuringLoadPerS < 0.95 * r.publishedPerS) break;
      }
      // Sustained: the highest step stored as it came (≥ 95 % of offered during the load) with p99
      // publish → WebSocket under 250 ms (the target); keptUp: the same without the latency bound.
      const keeps = (r: Record<string, unknown>) => Number(r.storedDuringLoadPerS) >= 0.95 * Number(r.publishedPerS);
      const best = steps.filter((r) => keeps(r) && Number(r.latencyP99Ms ?? Infinity) <= 250).pop();
      const kept = steps.filter(keeps).pop();
      out.sustainedStoredPerS = best ? best.storedDuringLoadPerS : 0;
      out.sustainedLatencyP50Ms = best ? best.latencyP50Ms : null;
      out.sustainedLatencyP99Ms = best ? best.latencyP99Ms : null;
      out.keptUpStoredPerS = kept ? kept.storedDuringLoadPerS : 0;
      out.keptUpLatencyP99Ms = kept ? kept.latencyP99Ms : null;
      out.sustainedCpuSPer1kReadings = best ? best.cpuSPer1kReadings : null;
      out.stallRecoveries = srv.broker?.stallRecoveries ?? 0;
      const hist = async (name: string) => {
        const m = await srv.ctx.metrics.registry.getSingleMetric(name)?.get();
        const sum = m?.values.find((v) => (v as { metricName?: string }).metricName?.endsWith('_sum'))?.value ?? 0;
        const cnt = m?.values.find((v) => (v as { metricName?: string }).metricName?.endsWith('_count'))?.value ?? 0;
        return { batches: cnt, mean: cnt ? sum / cnt : 0 };
      };
      const bs = await hist('rimehold_ingest_batch_size');
      const it = await hist('rimehold_ingest_insert_seconds');
      out.batches = bs.batches;
      out.meanBatchSize = Math.round(bs.mean);
      out.meanCommitMs = Number((it.mean * 1000).toFixed(1));
      const alone = Number(mode === 'mosquitto' ? results.mosquittoAloneMsgPerS : results.brokerAloneMsgPerS);
      out.ratioToBrokerAlone = Number((Number(out.sustainedStoredPerS) / alone).toFixed(2));
      out.ratioToDbAlone = Number((Number(out.sustainedStoredPerS) / Number(results.dbAloneRowsPerS)).toFixed(2));
    } finally {
      await srv.stop();
    }
    return out;
  };

  let runIndex = 0;
  for (const mode of MODES) {
    const runs = new Map<boolean, Record<string, unknown>>();
    const modeOut: Record<string, unknown> = {};
    for (const alarmsOn of ALARM_ORDER) {
      const run = await pipelineRun(alarmsOn, runIndex++, mode);
      runs.set(alarmsOn, run);
      modeOut[alarmsOn ? 'alarmsOn' : 'alarmsOff'] = run;
    }
    // The alarm goal: with alarm evaluation on, the sustained rate keeps at least 90 % of the rate
    // with it off. Both are steps of BENCH_RATES, so the ratio is only as fine as those steps.
    const onPerS = Number(runs.get(true)?.sustainedStoredPerS ?? 0);
    const offPerS = Number(runs.get(false)?.sustainedStoredPerS ?? 0);
    modeOut.alarmsOnToOffRatio = offPerS > 0 ? Number((onPerS / offPerS).toFixed(2)) : null;
    modeOut.alarmsOnGoal =
      offPerS > 0
        ? `${onPerS / offPerS >= ALARM_GOAL_RATIO ? 'met' : 'NOT met'}: on ${onPerS}/s vs off ${offPerS}/s sustained, goal on ≥ ${ALARM_GOAL_RATIO} × off`
        : 'not measured: the alarms-off run sustained no step';
    if (mode === 'mosquitto') {
      // The mosquitto goal, with alarm evaluation on: ≥ 15,000/s sustained with two ingest workers.
      const ratio = onPerS / Number(results.mosquittoAloneMsgPerS);
      modeOut.mosquittoGoal = `${onPerS >= MOSQUITTO_GOAL_PER_S && WORKERS === 2 ? 'met' : 'NOT met'}: ${onPerS}/s sustained with alarms on (p99 < 250 ms) and ${WORKERS} ingest workers, ${ratio.toFixed(2)} of mosquitto alone; goal ≥ ${MOSQUITTO_GOAL_PER_S}/s with 2 workers`;
    } else {
      // The embedded-broker goal, with alarm evaluation on: ≥ 8,000/s sustained and ≥ 60 % of the broker alone.
      const ratio = onPerS / Number(results.brokerAloneMsgPerS);
      modeOut.embeddedGoal = `${onPerS >= EMBEDDED_GOAL_PER_S && ratio >= EMBEDDED_GOAL_RATIO ? 'met' : 'NOT met'}: ${onPerS}/s sustained with alarms on (p99 < 250 ms), ${ratio.toFixed(2)} of the broker alone; goal ≥ ${EMBEDDED_GOAL_PER_S}/s and ≥ ${EMBEDDED_GOAL_RATIO}`;
    }
    results[modeKey(mode)] = modeOut;
  }
  // Side by side: the sustained rate and the CPU per 1,000 readings at it, per mode and alarm setting.
  results.sideBySide = Object.fromEntries(
    MODES.flatMap((mode) =>
      ALARM_ORDER.map((on) => {
        const run = (results[modeKey(mode)] as Record<string, Record<string, unknown>>)[on ? 'alarmsOn' : 'alarmsOff'];
        return [`${mode}, alarms ${on ? 'on' : 'off'}`, { sustainedStoredPerS: run?.sustainedStoredPerS, p99Ms: run?.sustainedLatencyP99Ms, keptUpStoredPerS: run?.keptUpStoredPerS, cpuSPer1kReadings: run?.sustainedCpuSPer1kReadings }];
      }),
    ),
  );

  const [chk] = await fleetDb.query<{ n: number; distinct_seq: number }>('SELECT COUNT(*) AS n, COUNT(DISTINCT box_id, seq) AS distinct_seq FROM readings', { type: QueryTypes.SELECT });
  const perBox = await fleetDb.query<{ serial: string; max_seq: number }>('SELECT c.serial, MAX(r.seq) AS max_seq FROM readings r JOIN controllers c ON c.box_id = r.box_id GROUP BY c.serial', { type: QueryTypes.SELECT });
  const mismatched = Object.entries(published).filter(([serial, max]) => Number(perBox.find((b) => b.serial === serial)?.max_seq) !== max).length;
  results.countCheck =
    Number(chk?.n) === totalPublished && Number(chk?.distinct_seq) === totalPublished && mismatched === 0
      ? `ok: ${totalPublished} published over all ${runIndex} runs, ${chk?.n} stored, none twice`
      : `FAILED: published ${totalPublished} over all ${runIndex} runs, stored ${chk?.n}, distinct ${chk?.distinct_seq}, controllers with a missing last seq ${mismatched}`;
  await fleetDb.close();
} finally {
  await mosquitto?.stop(true);
  await instance.stop(true);
}
console.log(JSON.stringify(results, null, 2));
