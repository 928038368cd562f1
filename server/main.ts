/** startServer(): wires config, database, mail, broker, ingest, HTTP and WebSocket; stop() undoes it. */
import http from 'node:http';
import path from 'node:path';
import type { AddressInfo } from 'node:net';
import type { Config } from './config';
import { createLogger, type Logger } from './logger';
import { createSequelize } from './db/sequelize';
import { initModels } from './models';
import { createMailer } from './mail/mailer';
import { FakeSmtp } from './mail/fakeSmtp';
import { EventBus } from './events/bus';
import { createApp } from './app';
import type { AppContext, BrokerStatus } from './context';
import { EmbeddedBroker, type BrokerHandle, type BrokerOptions } from './mqtt/broker';
import { BrokerProxy } from './mqtt/brokerProxy';
import { IngestWorkers } from './telemetry/ingestWorkers';
import { startMosquittoAccounts } from './mqtt/mosquittoAccounts';
import { Ingest } from './telemetry/ingest';
import { CommitStreams } from './telemetry/writer';
import { BoxCache } from './telemetry/boxCache';
import { createTelemetryMetrics } from './telemetry/metrics';
import { SettingsService } from './telemetry/settings';
import { scheduleRetention } from './telemetry/partitions';
import { LiveHub } from './ws/hub';
import { AlarmService } from './alarms/service';
import { PushService } from './push/service';
import { registerDemoPushDevice } from './push/demo';
import { scheduleWeeklyReports } from './reports/cron';

export interface RunningServer {
  url: string;
  port: number;
  ctx: AppContext;
  server: http.Server;
  /** The embedded broker, inline or in its own process (MQTT_EMBEDDED_IN); null with an external one. */
  broker: BrokerHandle | null;
  ingest: Ingest | null;
  /** The ingest worker processes (INGEST_WORKERS ≥ 2), or null when the server's ingest takes the telemetry. */
  ingestWorkers: IngestWorkers | null;
  /** The alarm service (with telemetry only). */
  alarms: AlarmService | null;
  hub: LiveHub;
  /** The MQTT URL controllers connect to (embedded broker), or null. */
  mqttUrl: string | null;
  stop(): Promise<void>;
}

export interface StartOptions {
  logger?: Logger;
  /** Start the MQTT broker and the ingest (default true). */
  telemetry?: boolean;
  /** Ingest batching (tests and benchmarks). */
  batchSize?: number;
  batchWindowMs?: number;
}

/** Starts the whole server process on config.HOST:config.PORT (0 = a free port). */
export async function startServer(config: Config, opts: StartOptions = {}): Promise<RunningServer> {
  const logger = opts.logger ?? createLogger(config.LOG_LEVEL);
  const sequelize = createSequelize(config, logger);
  await sequelize.authenticate();
  const models = initModels(sequelize);
  const stops: Array<() => Promise<void> | void> = [];

  let mailbox: FakeSmtp | null = null;
  let smtpPort = config.SMTP_PORT;
  if (config.SMTP_FAKE) {
    mailbox = new FakeSmtp();
    smtpPort = await mailbox.listen(config.SMTP_PORT);
    const mb = mailbox;
    stops.push(() => mb.close());
    logger.info({ port: smtpPort }, 'fake SMTP server listening (dev mailbox at /api/v1/dev/mailbox)');
  }
  const mailer = createMailer(config, smtpPort);
  stops.push(() => mailer.close());

  const bus = new EventBus();
  const metrics = createTelemetryMetrics();
  const telemetry = opts.telemetry ?? true;
  let embedded: BrokerHandle | null = null;
  let ingest: Ingest | null = null;
  let workers: IngestWorkers | null = null;
  let mqttUrl: string | null = null;
  let alarms: AlarmService | null = null;
  const brokerStatus: BrokerStatus = {
    mode: !telemetry ? 'none' : config.MQTT_URL ? 'external' : config.MQTT_BROKER === 'mosquitto' ? 'mosquitto' : 'embedded',
    state: () => (embedded ? (embedded.up ? 'up' : 'down') : ingest?.connected ? 'up' : 'down'),
  };
  const push = await PushService.start(sequelize, config, logger);
  stops.push(() => push.stop());
  const ctx: AppContext = { config, logger, sequelize, models, mailer, mailbox, bus, broker: brokerStatus, metrics, push };
  if (config.DEMO_MODE) await registerDemoPushDevice(ctx);
  const settings = new SettingsService(ctx);

  if (telemetry) {
    // MQTT_BROKER=mosquitto: the broker runs apart (scripts/lib/mosquitto.ts); the server manages
    // its accounts over the dynamic-security control topic and its ingest connects to it.
    if (config.MQTT_BROKER === 'mosquitto') {
      const accounts = await startMosquittoAccounts(config, { models, bus, logger });
      ctx.deviceAccounts = accounts;
      stops.push(() => accounts.stop());
      mqttUrl = `mqtt://${config.MQTT_HOST}:${config.MQTT_PORT}`;
    }
    if (!config.MQTT_URL && config.MQTT_BROKER === 'embedded') {
      const brokerOptions: BrokerOptions = {
        host: config.MQTT_HOST,
        port: config.MQTT_PORT,
        persistenceDir: config.MQTT_PERSISTENCE_DIR ?? path.join(config.DATA_DIR, 'broker'),
        persistence: config.MQTT_PERSISTENCE,
        ingestUser: config.MQTT_INGEST_USER,
        ingestPassword: config.MQTT_INGEST_PASSWORD,
        ingestClientId: config.MQTT_INGEST_CLIENT_ID,
        simUser: config.DEMO_MODE ? config.MQTT_SIM_USER : null,
        simPassword: config.DEMO_MODE ? config.MQTT_SIM_PASSWORD : null,
        simClientId: config.MQTT_SIM_CLIENT_ID,
        limits: {
          maxConnectBytes: config.MQTT_MAX_CONNECT_BYTES,
          maxPacketBytes: config.MQTT_MAX_PACKET_BYTES,
          maxConnections: config.MQTT_MAX_CONNECTIONS,
          maxPendingConnects: config.MQTT_MAX_PENDING_CONNECTS,
          connectDeadlineMs: config.MQTT_CONNECT_DEADLINE_MS,
          maxDeviceAuthFailures: config.MQTT_DEVICE_AUTH_FAILURES,
          deviceAuthLockoutMs: config.MQTT_DEVICE_AUTH_LOCKOUT_S * 1000,
          unknownSerialTtlMs: config.MQTT_UNKNOWN_SERIAL_CACHE_S * 1000,
        },
        ingestQueueLimit: config.MQTT_INGEST_QUEUE_LIMIT,
        models,
        bus,
        metrics,
        logger,
      };
      // process: the broker on its own event loop (the other core), with its own sign-in pool.
      embedded = config.MQTT_EMBEDDED_IN === 'process' ? new BrokerProxy({ ...brokerOptions, metrics, config }) : new EmbeddedBroker(brokerOptions);
      const port = await embedded.start();
      mqttUrl = `mqtt://${config.MQTT_HOST}:${port}`;
    }
    const writer = new CommitStreams(config, config.INGEST_COMMIT_STREAMS);
    const boxes = new BoxCache(models, bus);
    ingest = new Ingest({
      url: config.MQTT_URL ?? mqttUrl ?? '',
      username: config.MQTT_INGEST_USER,
      password: config.MQTT_INGEST_PASSWORD,
      clientId: config.MQTT_INGEST_CLIENT_ID,
      maxAgeDays: config.RETENTION_RAW_DAYS,
      batchSize: opts.batchSize,
      batchWindowMs: opts.batchWindowMs,
      models,
      bus,
      metrics,
      logger,
      writer,
      boxes,
      onConfigAck: (serial, ack) => settings.onAck(serial, ack),
      // With ingest workers the telemetry goes to them; status and acks stay here (one subscriber).
      kinds: config.INGEST_WORKERS > 1 ? ['status', 'config/ack'] : undefined,
    });
    // Subscribed before the ingest starts, so no replayed reading passes unevaluated.
    // ALARMS_ENABLED=0 (benchmarks only) starts none.
    const alarmService = config.ALARMS_ENABLED ? new AlarmService(ctx) : null;
    await alarmService?.start();
    alarms = alarmService;
    await ingest.start();
    if (config.INGEST_WORKERS > 1) {
      workers = new IngestWorkers({ count: config.INGEST_WORKERS, url: mqttUrl ?? '', config, bus, metrics, logger, batchSize: opts.batchSize, batchWindowMs: opts.batchWindowMs });
      await workers.start();
    }
    const ws = workers;
    const ing = ingest;
    ctx.publish = (topic, payload, o) => ing.publish(topic, payload, o);
    settings.start();
    const stopRetention = scheduleRetention(sequelize, { rawDays: config.RETENTION_RAW_DAYS, rollupDays: config.RETENTION_ROLLUP_DAYS }, logger);
    stops.push(async () => {
      stopRetention();
      settings.stop();
      await ws?.stop();
      await ing.stop();
      await alarmService?.stop();
      await writer.close();
      boxes.close();
      await embedded?.stop();
    });
  }

  // Weekly report e-mails, hourly (WEEKLY_REPORTS_ENABLED; off in tests unless asked).
  if (config.WEEKLY_REPORTS_ENABLED) stops.push(scheduleWeeklyReports(ctx));
  const { app, sessionMiddleware, passportInitialize, passportSession } = createApp(ctx, settings);
  const server = http.createServer(app);
  await new Promise<void>((resolve, reject) => {
    server.once('error', reject);
    server.listen(config.PORT, config.HOST, () => resolve());
  });
  const port = (server.address() as AddressInfo).port;
  const url = `http://${config.HOST}:${port}`;
  const allowed = new Set([new URL(config.publicUrl).origin, url, `http://127.0.0.1:${port}`, `http://localhost:${port}`, 'http://127.0.0.1:5173', 'http://localhost:5173']);
  const hub = new LiveHub({ server, bus, logger, middlewares: [sessionMiddleware, passportInitialize, passportSession], allowedOrigins: (origin) => allowed.has(origin) });
  hub.start();
  logger.info({ url, mqtt: mqttUrl ?? config.MQTT_URL ?? null }, 'Rimehold server listening');

  let stopped = false;
  return {
    url,
    port,
    ctx,
    server,
    broker: embedded,
    ingest,
    ingestWorkers: workers,
    alarms,
    hub,
    mqttUrl,
    async stop() {
      if (stopped) return;
      stopped = true;
      hub.stop();
      server.closeAllConnections();
      await new Promise<void>((resolve) => server.close(() => resolve()));
      for (const s of stops.reverse()) await s();
      await sequelize.close();
    },
  };
}
