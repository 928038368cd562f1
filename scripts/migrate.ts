/** npm run migrate: applies pending migrations to the configured database (starting the project instance if needed). */
import { loadConfig } from '../server/config';
import { createSequelize } from '../server/db/sequelize';
import { migrateUp } from '../server/db/migrate';
import { ensureDatabase } from './lib/database';

const config = loadConfig();
const instance = await ensureDatabase(config, 'mariadb');
const sequelize = createSequelize(config);
try {
  const applied = await migrateUp(sequelize);
  console.log(applied.length ? `applied: ${applied.join(', ')}` : 'no pending migrations');
} finally {
  await sequelize.close();
  await instance?.stop();
}
