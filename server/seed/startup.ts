/**
 * What `npm start` does with the database's content after migrating: the demo scenario in demo
 * mode only; otherwise never a demo account, and in production a refusal when demo accounts
 * (whose passwords are published) are still enabled in the database.
 */
import type { Sequelize } from 'sequelize';
import type { Config } from '../config';
import type { Models } from '../models';
import { anyAdminExists } from '../admin/firstAdmin';
import { demoAccountsPresent, seedDemo } from './seed';
import { seedDemoHistory, type HistoryConfig } from './history';

/** Seeds the demo (demo mode) or checks a real install; throws when production must not start. */
export async function prepareContent(config: Pick<Config, 'DEMO_MODE' | 'NODE_ENV'> & Partial<HistoryConfig>, sequelize: Sequelize, models: Models, fleetFile: string, log: (l: string) => void): Promise<void> {
  if (config.DEMO_MODE) {
    const seeded = await seedDemo(sequelize, models, fleetFile);
    log(seeded.created ? 'demo scenario seeded' : 'demo scenario already present');
    if (hasHistoryConfig(config)) {
      // The demo runs without its past rather than not at all; boxes left out are seeded next start.
      await seedDemoHistory(config, sequelize, models, { log }).catch((err: unknown) => log(`demo history not seeded: ${err instanceof Error ? err.message : String(err)}`));
    }
    return;
  }
  const demo = await demoAccountsPresent(models);
  if (demo.length && config.NODE_ENV === 'production') {
    throw new Error(`Refusing to start in production: this database holds enabled demo accounts (${demo.join(', ')}) whose passwords are public. Use a fresh database, or disable or delete these users first.`);
  }
  if (demo.length) log(`warning: demo accounts are enabled in this database (${demo.join(', ')}); production mode will refuse to start with them`);
  if (!(await anyAdminExists(models))) log('no administrator yet: create the first one with  npm run admin:create -- --email you@example.com --name "Your Name"');
}

function hasHistoryConfig(c: Partial<HistoryConfig>): c is HistoryConfig {
  return c.DEMO_HISTORY_DAYS !== undefined && c.RETENTION_RAW_DAYS !== undefined && c.RETENTION_ROLLUP_DAYS !== undefined && c.DB_HOST !== undefined && c.DB_PORT !== undefined && c.DB_USER !== undefined && c.DB_PASSWORD !== undefined && c.DB_NAME !== undefined;
}
