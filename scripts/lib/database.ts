/** Brings up the database a process needs: the project's own instance unless DB_EXTERNAL=1. */
import path from 'node:path';
import type { Config } from '../../server/config';
import { MariaInstance } from './mariadb';

/** Starts (or reuses) the project instance for this config and makes sure the app database and user exist. */
export async function ensureDatabase(config: Config, dataDirName: string, log: (l: string) => void = console.log): Promise<MariaInstance | null> {
  if (config.DB_EXTERNAL) {
    log(`using the external MariaDB at ${config.DB_HOST}:${config.DB_PORT} (DB_EXTERNAL=1)`);
    return null;
  }
  if (config.DB_HOST !== '127.0.0.1' && config.DB_HOST !== 'localhost') {
    throw new Error('DB_HOST must be 127.0.0.1 for the project instance; set DB_EXTERNAL=1 for another server');
  }
  const instance = new MariaInstance({
    dataDir: path.join(config.DATA_DIR, dataDirName),
    port: config.DB_PORT,
    bufferPoolMiB: config.DB_BUFFER_POOL_MIB,
    redoLogMiB: config.DB_REDO_LOG_MIB,
    log,
  });
  await instance.start();
  instance.ensureAppDatabase({ name: config.DB_NAME, user: config.DB_USER, password: config.DB_PASSWORD });
  return instance;
}
