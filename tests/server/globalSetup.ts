/** Migrates the (empty) test database once before the server test files run. */
import { loadConfig } from '../../server/config';
import { createSequelize } from '../../server/db/sequelize';
import { migrateUp } from '../../server/db/migrate';

export default async function setup(): Promise<void> {
  const sequelize = createSequelize(loadConfig());
  try {
    await migrateUp(sequelize);
  } finally {
    await sequelize.close();
  }
}
