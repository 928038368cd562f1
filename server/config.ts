/**
 * The one typed configuration of the server, read from the environment (and `.env`) once.
 * Fails fast with a readable message when a value is malformed.
 */
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { randomBytes } from 'node:crypto';
import dotenv from 'dotenv';
import { z } from 'zod';
import { DEFAULT_BROKER_LIMITS as BL } from './mqtt/limits';

export const PROJECT_ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');

// npm test runs on the environment scripts/test.ts gives it, never on a developer's .env (whose
// MQTT_BROKER or MQTT_EMBEDDED_IN would otherwise change what the tests exercise).
// RIMEHOLD_ENV_FILE names another file than the project's `.env` (tests of this rule use it).
if (process.env.NODE_ENV !== 'test') dotenv.config({ path: process.env.RIMEHOLD_ENV_FILE ?? path.join(PROJECT_ROOT, '.env'), quiet: true });

const bool = z
  .enum(['0', '1', 'true', 'false', ''])
  .default('0')
  .transform((v) => v === '1' || v === 'true');

/** Like `bool`, but on when unset or empty. */
const boolOn = z
  .enum(['0', '1', 'true', 'false', ''])
  .default('1')
  .transform((v) => v === '1' || v === 'true' || v === '');

const EnvSchema = z.object({
  NODE_ENV: z.enum(['development', 'production', 'test']).default('development'),
  HOST: z.string().default('127.0.0.1'),
  PORT: z.coerce.number().int().min(0).max(65535).default(3000),
  PUBLIC_URL: z.string().url().optional(),
  SESSION_SECRET: z.string().min(16, 'SESSION_SECRET must be at least 16 characters').default('dev-only-session-secret-change-me'),
  SESSION_MAX_AGE_H: z.coerce.number().positive().default(12),
  DB_HOST: z.string().default('127.0.0.1'),
  DB_PORT: z.coerce.number().int().min(1).max(65535).default(3307),
  DB_NAME: z.string().regex(/^[A-Za-z0-9_]+$/).default('rimehold'),
  DB_USER: z.string().default('rimehold'),
  DB_PASSWORD: z.string().default('rimehold-dev-password'),
  DB_POOL_MAX: z.coerce.number().int().min(1).default(10),
  /** 1: use an existing MariaDB given by DB_*; never start or install one. */
  DB_EXTERNAL: bool,
  DB_BUFFER_POOL_MIB: z.coerce.number().int().min(64).default(1024),
  DB_REDO_LOG_MIB: z.coerce.number().int().min(16).default(512),
  DATA_DIR: z.string().default(path.join(PROJECT_ROOT, '.data')),
  /** Service-visit photos and PDFs, outside the web root, under random names (git-ignored). */
  UPLOADS_DIR: z.string().default(path.join(PROJECT_ROOT, 'var', 'uploads')),
  /** Largest attachment accepted, MiB. */
  UPLOAD_MAX_MIB: z.coerce.number().positive().max(100).default(10),
  MQTT_PORT: z.coerce.number().int().min(0).max(65535).default(1883),
  MQTT_HOST: z.string().default('127.0.0.1'),
  /** When set, the ingest connects to this external broker and no broker is embedded. */
  MQTT_URL: z.string().optional(),
  MQTT_INGEST_USER: z.string().default('rimehold-ingest'),
  MQTT_INGEST_PASSWORD: z.string().default('dev-only-ingest-password'),
  /** The one client id the ingest account may connect with (the ingest's persistent session). */
  MQTT_INGEST_CLIENT_ID: z.string().min(1).max(64).default('rimehold-ingest'),
  /** The demo simulator's service account (subscribes to the fault injection topic only). */
  MQTT_SIM_USER: z.string().default('rimehold-sim'),
  /** Unset: a random secret per process (hand it to the simulator child through its environment). */
  MQTT_SIM_PASSWORD: z.string().default(() => randomBytes(24).toString('base64url')),
  /** The one client id the simulator's account may connect with. */
  MQTT_SIM_CLIENT_ID: z.string().min(1).max(64).default('rimehold-sim'),
  /** Largest CONNECT packet the broker reads, bytes (remaining length); the socket is closed beyond. */
  MQTT_MAX_CONNECT_BYTES: z.coerce.number().int().min(128).default(BL.maxConnectBytes),
  /** Largest packet of any other kind, bytes (telemetry payloads are at most MAX_TELEMETRY_BYTES). */
  MQTT_MAX_PACKET_BYTES: z.coerce.number().int().min(4608).default(BL.maxPacketBytes),
  /** Open MQTT connections at most. */
  MQTT_MAX_CONNECTIONS: z.coerce.number().int().min(1).default(BL.maxConnections),
  /** Connections that have not completed CONNECT at most. */
  MQTT_MAX_PENDING_CONNECTS: z.coerce.number().int().min(1).default(BL.maxPendingConnects),
  /** A connection that has not completed CONNECT within this is closed, ms. */
  MQTT_CONNECT_DEADLINE_MS: z.coerce.number().int().min(100).default(BL.connectDeadlineMs),
  /** Failed device sign-ins from one address before further ones are refused without a lookup. */
  MQTT_DEVICE_AUTH_FAILURES: z.coerce.number().int().min(1).default(BL.maxDeviceAuthFailures),
  /** How long such an address is refused, s. */
  MQTT_DEVICE_AUTH_LOCKOUT_S: z.coerce.number().int().min(1).default(BL.deviceAuthLockoutMs / 1000),
  /** How long an unknown serial is refused from memory without a lookup, s. */
  MQTT_UNKNOWN_SERIAL_CACHE_S: z.coerce.number().int().min(0).default(BL.unknownSerialTtlMs / 1000),
  /**
   * Telemetry accepted by the broker but not yet acknowledged by the ingest. At this bound the
   * broker refuses further telemetry (the controller is disconnected and keeps buffering), so
   * nothing is dropped; it resumes once the ingest catches up.
   */
  MQTT_INGEST_QUEUE_LIMIT: z.coerce.number().int().min(100).default(200_000),
  /**
   * journal: durable sessions on disk (default). level: aedes-persistence-level, for comparison.
   * memory: for measuring only, loses sessions on restart.
   */
  MQTT_PERSISTENCE: z.enum(['journal', 'level', 'memory']).default('journal'),
  /**
   * Where the embedded broker runs. inline: in the server's own event loop. process: in a child
   * process of its own (server/mqtt/brokerProcess.ts) on the other core, restarted when it dies.
   */
  MQTT_EMBEDDED_IN: z.enum(['inline', 'process']).default('process'),
  /** Directory of the embedded broker's durable session store (default DATA_DIR/broker). */
  MQTT_PERSISTENCE_DIR: z.string().optional(),
  /**
   * embedded (default): the server's own broker. mosquitto: Debian's mosquitto, started on loopback
   * by `npm start` / `npm test` (scripts/lib/mosquitto.ts); accounts kept through its
   * dynamic-security plugin (server/mqtt/mosquittoAccounts.ts).
   */
  MQTT_BROKER: z.enum(['embedded', 'mosquitto']).default('embedded'),
  /** mosquitto's data directory: configuration, dynamic-security file, persistence (default DATA_DIR/mosquitto). */
  MOSQUITTO_DIR: z.string().optional(),
  /**
   * Seconds between mosquitto's saves of its state. At most 300: a controller keeps an acknowledged
   * reading for COMMIT_HOLD_MS (10 min) waiting for Rimehold's `committed`, longer than any save interval.
   */
  MOSQUITTO_AUTOSAVE_S: z.coerce.number().int().min(1).max(300).default(10),
  /**
   * Ingest processes that share the telemetry through an MQTT 5 shared subscription
   * (server/telemetry/ingestWorkers.ts). 1 (default): the server's own ingest takes everything.
   * 2 or more needs MQTT_BROKER=mosquitto (the embedded broker speaks MQTT 3.1.1, without shared subscriptions).
   */
  INGEST_WORKERS: z.coerce.number().int().min(1).max(16).default(1),
  /**
   * Commit streams per ingest: a batch is split by box over this many writers that commit at the
   * same time (server/telemetry/writer.ts CommitStreams); a box always takes the same stream.
   */
  INGEST_COMMIT_STREAMS: z.coerce.number().int().min(1).max(8).default(2),
  SMTP_HOST: z.string().default('127.0.0.1'),
  SMTP_PORT: z.coerce.number().int().min(0).max(65535).default(2525),
  SMTP_USER: z.string().optional(),
  SMTP_PASSWORD: z.string().optional(),
  SMTP_SECURE: bool,
  /** 1: start the local fake SMTP server and the dev mailbox page (development and tests). */
  SMTP_FAKE: bool,
  MAIL_FROM: z.string().default('Rimehold <no-reply@rimehold.example.com>'),
  /**
   * 1: start the local fake push service (server/push/fakePushService.ts) and the push inbox page.
   * Unset: on outside production, off in production (which refuses PUSH_FAKE=1).
   */
  PUSH_FAKE: z
    .enum(['0', '1', 'true', 'false', ''])
    .optional()
    .transform((v) => (v === undefined || v === '' ? null : v === '1' || v === 'true')),
  /** Port of the fake push service on 127.0.0.1 (0: any free port; its endpoints carry the port). */
  PUSH_FAKE_PORT: z.coerce.number().int().min(0).max(65535).default(0),
  /** The VAPID contact (RFC 8292 §2.1): a mailto: or https: URL the push services may write to. */
  PUSH_VAPID_SUBJECT: z.string().regex(/^(mailto:|https:\/\/)\S+$/, 'PUSH_VAPID_SUBJECT must be a mailto: or https: URL').default('mailto:no-reply@rimehold.example.com'),
  LOG_LEVEL: z.enum(['fatal', 'error', 'warn', 'info', 'debug', 'trace', 'silent']).default('info'),
  LOGIN_RATE_LIMIT: z.coerce.number().int().min(1).default(10),
  RETENTION_RAW_DAYS: z.coerce.number().int().min(1).default(90),
  RETENTION_ROLLUP_DAYS: z.coerce.number().int().min(1).default(3 * 365),
  DEMO_MODE: bool,
  /**
   * Days of past readings (with rollups and past alarms) seeded for every demo box at first start
   * in demo mode (server/seed/history.ts); 0 skips it. Unset under NODE_ENV=test: 0.
   */
  DEMO_HISTORY_DAYS: z.coerce.number().int().min(0).max(90).default(14),
  /**
   * 1 (default): evaluate alarm rules on every reading in the ingest path (server/alarms/service.ts).
   * 0: start no alarm service — for `npm run bench:ingest`, which measures the ingest with alarm
   * evaluation on and off in one run; never turn it off in a real install (no alarm would be raised).
   */
  ALARMS_ENABLED: boolOn,
  /**
   * 1 (default): the hourly job that mails each site's weekly report on Monday 07:00–07:59 site
   * time (server/reports/cron.ts). Unset under NODE_ENV=test: off (tests trigger the job themselves).
   */
  WEEKLY_REPORTS_ENABLED: boolOn,
});

export type Config = Omit<z.infer<typeof EnvSchema>, 'PUSH_FAKE'> & { PUSH_FAKE: boolean; publicUrl: string };

/** The secrets a production install must set itself (their defaults are public, in this file). */
export const PRODUCTION_SECRETS = ['SESSION_SECRET', 'DB_PASSWORD', 'MQTT_INGEST_PASSWORD', 'MQTT_SIM_PASSWORD'] as const;
/** Placeholders and sample values seen in .env.example and the docs: never a real secret. */
const EXAMPLE_SECRET = /^(GENERATED|change-?me.*|changeme|secret|password|example.*|dev-only.*|rimehold.*)$/i;

/**
 * Why a parsed environment must not run in production, one sentence each (empty when fine):
 * demo mode, the fake SMTP server, and any secret left at its default or an example value.
 */
export function productionRefusals(c: z.infer<typeof EnvSchema>): string[] {
  const out: string[] = [];
  if (c.DEMO_MODE) out.push('DEMO_MODE is on: demo people, businesses and passwords exist only in demo mode (set DEMO_MODE=0).');
  if (c.SMTP_FAKE) out.push('SMTP_FAKE is on: the local fake SMTP server keeps mail on this machine (set SMTP_FAKE=0 and the SMTP_* of your relay).');
  if (c.PUSH_FAKE === true) out.push('PUSH_FAKE is on: the local fake push service keeps phone notifications on this machine (set PUSH_FAKE=0 or leave it unset).');
  const defaults = EnvSchema.parse({});
  for (const key of PRODUCTION_SECRETS) {
    const value = c[key];
    if (value === defaults[key] || EXAMPLE_SECRET.test(value) || value.length < 16) out.push(`${key} is a default, example or short value: set a random secret of at least 16 characters.`);
  }
  return out;
}

/** Parses an environment into a Config; throws one error listing every bad variable. */
export function loadConfig(env: NodeJS.ProcessEnv = process.env): Config {
  const parsed = EnvSchema.safeParse(env);
  if (!parsed.success) {
    const lines = parsed.error.issues.map((i) => `  ${i.path.join('.')}: ${i.message}`);
    throw new Error(`Invalid configuration:\n${lines.join('\n')}`);
  }
  const c = parsed.data;
  if (c.MQTT_BROKER === 'mosquitto' && c.MQTT_URL) throw new Error('Invalid configuration:\n  MQTT_URL: leave it unset with MQTT_BROKER=mosquitto (the server connects to its mosquitto at MQTT_HOST:MQTT_PORT)');
  if (c.INGEST_WORKERS > 1 && c.MQTT_BROKER !== 'mosquitto') throw new Error('Invalid configuration:\n  INGEST_WORKERS: more than 1 needs MQTT_BROKER=mosquitto (shared subscriptions are MQTT 5; the embedded broker speaks 3.1.1)');
  if (c.NODE_ENV === 'production') {
    const refusals = productionRefusals(c);
    if (refusals.length) throw new Error(`Refusing to start in production:\n${refusals.map((r) => `  ${r}`).join('\n')}`);
  }
  // Tests start with no demo history unless one asks for it (seeding costs seconds).
  const historyDays = env.DEMO_HISTORY_DAYS === undefined && c.NODE_ENV === 'test' ? 0 : c.DEMO_HISTORY_DAYS;
  const weeklyReports = env.WEEKLY_REPORTS_ENABLED === undefined && c.NODE_ENV === 'test' ? false : c.WEEKLY_REPORTS_ENABLED;
  return { ...c, DEMO_HISTORY_DAYS: historyDays, WEEKLY_REPORTS_ENABLED: weeklyReports, PUSH_FAKE: c.PUSH_FAKE ?? c.NODE_ENV !== 'production', publicUrl: c.PUBLIC_URL ?? `http://${c.HOST === '0.0.0.0' ? '127.0.0.1' : c.HOST}:${c.PORT}` };
}
