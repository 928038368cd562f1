/** startServer(): wires config, database, mail, broker, ingest, HTTP and WebSocket; stop() undoes it. */
import http from 'node:http';
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

export interface RunningServer {
  url: string;
  port: number;
  ctx: AppContext;
  server: http.Server;
  stop(): Promise<void>;
}

export interface StartOptions {
  logger?: Logger;
  /** Start the MQTT broker and the ingest (default true). */
  telemetry?: boolean;
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

  const broker: BrokerStatus = { mode: 'none', state: () => 'down' };
  const ctx: AppContext = { config, logger, sequelize, models, mailer, mailbox, bus: new EventBus(), broker };

  const { app, sessionMiddleware } = createApp(ctx);
  const server = http.createServer(app);
  void sessionMiddleware;
  await new Promise<void>((resolve, reject) => {
    server.once('error', reject);
    server.listen(config.PORT, config.HOST, () => resolve());
  });
  const port = (server.address() as AddressInfo).port;
  const url = `http://${config.HOST}:${port}`;
  logger.info({ url }, 'HTTP server listening');

  let stopped = false;
  return {
    url,
    port,
    ctx,
    server,
    async stop() {
      if (stopped) return;
      stopped = true;
      server.closeAllConnections();
      await new Promise<void>((resolve) => server.close(() => resolve()));
      for (const s of stops.reverse()) await s();
      await sequelize.close();
    },
  };
}
