/**
 * npm run admin:create -- --email you@example.com --name "Your Name" [--reissue]
 * Creates an administrator (migrating the configured database first) and prints a one-time
 * set-password link. The way a real install (DEMO_MODE=0) gets its first administrator.
 */
import { parseArgs } from 'node:util';
import { loadConfig } from '../server/config';
import { createSequelize } from '../server/db/sequelize';
import { migrateUp } from '../server/db/migrate';
import { initModels } from '../server/models';
import { createFirstAdmin } from '../server/admin/firstAdmin';
import { INVITE_VALID_H } from '../server/users/invite';
import { ensureDatabase } from './lib/database';

const { values } = parseArgs({ options: { email: { type: 'string' }, name: { type: 'string' }, reissue: { type: 'boolean', default: false }, help: { type: 'boolean', default: false } } });
if (values.help || !values.email) {
  console.log('usage: npm run admin:create -- --email you@example.com --name "Your Name" [--reissue]');
  process.exit(values.help ? 0 : 2);
}
const config = loadConfig();
const instance = await ensureDatabase(config, 'mariadb');
const sequelize = createSequelize(config);
let code = 0;
try {
  await migrateUp(sequelize);
  const { link, created } = await createFirstAdmin(initModels(sequelize), config.publicUrl, { email: values.email, name: values.name ?? values.email, reissue: values.reissue });
  console.log(`${created ? 'Administrator created' : 'New link issued'} for ${values.email}.`);
  console.log(`Open this link within ${INVITE_VALID_H} hours to choose the password (it works once):\n  ${link}`);
} catch (err) {
  console.error(err instanceof Error ? err.message : err);
  code = 1;
} finally {
  await sequelize.close();
  await instance?.stop();
}
process.exit(code);
