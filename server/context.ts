/** What every feature's routes and services are given: config, logger, database, mail, the event bus. */
import type { Sequelize } from 'sequelize';
import type { Config } from './config';
import type { Logger } from './logger';
import type { Models } from './models';
import type { Mailer } from './mail/mailer';
import type { FakeSmtp } from './mail/fakeSmtp';
import type { EventBus } from './events/bus';
import type { TelemetryMetrics } from './telemetry/metrics';
import type { PushService } from './push/service';
import type { DeviceAccounts } from './mqtt/mosquittoAccounts';

export interface BrokerStatus {
  /** 'up' when the embedded broker listens (or the external one is connected), 'down' otherwise. */
  state(): 'up' | 'down';
  mode: 'embedded' | 'external' | 'mosquitto' | 'none';
}

export interface AppContext {
  config: Config;
  logger: Logger;
  sequelize: Sequelize;
  models: Models;
  mailer: Mailer;
  /** The fake SMTP server's captured mail (SMTP_FAKE=1 only). */
  mailbox: FakeSmtp | null;
  bus: EventBus;
  /** Web Push: VAPID keys, sending, the fake push service (PUSH_FAKE=1); absent only in contexts built by hand. */
  push?: PushService;
  broker: BrokerStatus;
  /** Controller accounts on mosquitto's dynamic-security plugin (MQTT_BROKER=mosquitto only). */
  deviceAccounts?: DeviceAccounts;
  metrics: TelemetryMetrics;
  /** Publishes an MQTT message through the server's own client (settings, demo faults). */
  publish?: (topic: string, payload: string, opts?: { qos?: 0 | 1; retain?: boolean }) => Promise<void>;
}
