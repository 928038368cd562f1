/** Schema migrations with umzug; the list in ./migrations/index.ts runs in order. */
import type { QueryInterface, Sequelize } from 'sequelize';
import { Umzug, SequelizeStorage } from 'umzug';
import { MIGRATIONS } from './migrations/index';

/** Builds the migrator for a Sequelize instance. */
export function createMigrator(sequelize: Sequelize, log: (msg: string) => void = () => {}) {
  return new Umzug<QueryInterface>({
    migrations: MIGRATIONS.map((m) => ({ name: m.name, up: m.up, down: m.down })),
    context: sequelize.getQueryInterface(),
    storage: new SequelizeStorage({ sequelize, tableName: 'schema_migrations' }),
    logger: { info: (m) => log(JSON.stringify(m)), warn: (m) => log(JSON.stringify(m)), error: (m) => log(JSON.stringify(m)), debug: () => {} },
  });
}

/** Runs every pending migration; returns the names applied. */
export async function migrateUp(sequelize: Sequelize, log?: (msg: string) => void): Promise<string[]> {
  const done = await createMigrator(sequelize, log).up();
  return done.map((m) => m.name);
}

export type Migration = (params: { context: QueryInterface }) => Promise<void>;
