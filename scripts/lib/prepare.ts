/** The steps `npm start` and `npm run dev` share: .env, MariaDB, migrations, the demo seed. */
import { spawn, type ChildProcess } from 'node:child_process';
import path from 'node:path';
import { ensureEnvFile } from './env';
import { ensureDatabase } from './database';
import { projectRootFrom } from './root';
import type { Config } from '../../server/config';
import type { MariaInstance } from './mariadb';

export const ROOT = projectRootFrom(import.meta.url, 2);

export interface Prepared {
  config: Config;
  /** The project instance this process started (or reused), or null with DB_EXTERNAL=1. */
  instance: MariaInstance | null;
  fleetFile: string;
}

/** Creates .env if needed, brings up MariaDB, migrates and seeds the demo once. */
export async function prepare(log: (l: string) => void = console.log): Promise<Prepared> {
  if (ensureEnvFile(ROOT)) log('created .env from .env.example with generated secrets');
  // The config module reads .env, so import it after the file exists.
  const { loadConfig } = await import('../../server/config');
  const config = loadConfig();
  const instance = await ensureDatabase(config, 'mariadb', log);
  const { createSequelize } = await import('../../server/db/sequelize');
  const { migrateUp } = await import('../../server/db/migrate');
  const { initModels } = await import('../../server/models');
  const { prepareContent } = await import('../../server/seed/startup');
  const fleetFile = path.join(config.DATA_DIR, 'demo-controllers.json');
  const sequelize = createSequelize(config);
  try {
    const applied = await migrateUp(sequelize);
    if (applied.length) log(`migrations applied: ${applied.join(', ')}`);
    await prepareContent(config, sequelize, initModels(sequelize), fleetFile, log);
  } finally {
    await sequelize.close();
  }
  return { config, instance, fleetFile };
}

/** Starts the simulator for the demo fleet as a child process. */
export function startSimulator(config: Config, fleetFile: string): ChildProcess {
  return spawn(process.execPath, [path.join(ROOT, 'node_modules', 'tsx', 'dist', 'cli.mjs'), path.join(ROOT, 'simulator', 'cli.ts'), '--fleet', fleetFile], {
    cwd: ROOT,
    stdio: ['ignore', 'ignore', 'inherit'],
    env: { ...process.env, TZ: 'UTC', MQTT_PORT: String(config.MQTT_PORT), MQTT_SIM_USER: config.MQTT_SIM_USER, MQTT_SIM_PASSWORD: config.MQTT_SIM_PASSWORD, MQTT_SIM_CLIENT_ID: config.MQTT_SIM_CLIENT_ID },
  });
}
