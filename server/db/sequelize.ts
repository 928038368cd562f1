/** The Sequelize instance on MariaDB. Every process runs with TZ=UTC; the session time zone is +00:00. */
import { Sequelize } from 'sequelize';
import type { Config } from '../config';
import type { Logger } from '../logger';

/** Creates a Sequelize instance for the configured MariaDB (no connection is opened yet). */
export function createSequelize(config: Config, logger?: Logger): Sequelize {
  if (process.env.TZ !== 'UTC') {
    // Raw-query replacements format Date values in the process zone (STACK-NOTES §3).
    throw new Error('Run Rimehold with TZ=UTC (the npm scripts set it)');
  }
  return new Sequelize(config.DB_NAME, config.DB_USER, config.DB_PASSWORD, {
    host: config.DB_HOST,
    port: config.DB_PORT,
    dialect: 'mariadb',
    timezone: '+00:00',
    logging: logger ? (sql: string) => logger.trace({ sql }, 'sql') : false,
    dialectOptions: { bigNumberStrings: false, connectTimeout: 5000 },
    pool: { max: config.DB_POOL_MAX, min: 0, idle: 10_000, acquire: 30_000, evict: 1000 },
    define: { underscored: true, timestamps: true },
  });
}

/** Formats epoch ms as the UTC `YYYY-MM-DD HH:MM:SS.mmm` string MariaDB DATETIME(3) takes in raw SQL. */
export function sqlTs(ms: number): string {
  return new Date(ms).toISOString().replace('T', ' ').slice(0, 23);
}
