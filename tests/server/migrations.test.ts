/** The schema comes from migrations only: the test database, migrated from empty, matches them and the models. */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { QueryTypes, type Model, type ModelStatic, type Sequelize } from 'sequelize';
import { loadConfig } from '../../server/config';
import { createSequelize } from '../../server/db/sequelize';
import { createMigrator } from '../../server/db/migrate';
import { MIGRATIONS } from '../../server/db/migrations/index';
import { initModels } from '../../server/models';

const CORE_TABLES = ['audit_entries', 'boxes', 'controllers', 'customers', 'sessions', 'sites', 'users'];

let sequelize: Sequelize;

async function tables(): Promise<string[]> {
  const rows = await sequelize.query<{ t: string }>('SELECT table_name AS t FROM information_schema.tables WHERE table_schema = DATABASE() ORDER BY table_name', {
    type: QueryTypes.SELECT,
  });
  return rows.map((r) => r.t);
}

async function executed(): Promise<string[]> {
  const rows = await sequelize.query<{ name: string }>('SELECT name FROM schema_migrations ORDER BY name', { type: QueryTypes.SELECT });
  return rows.map((r) => r.name);
}

beforeAll(() => {
  sequelize = createSequelize(loadConfig());
});
afterAll(async () => {
  // Whatever happened above, leave the database fully migrated for the files that run after this one.
  await createMigrator(sequelize).up();
  await sequelize.close();
});

describe('migrations', () => {
  it('globalSetup migrated the test database: every core table exists and every migration is recorded', async () => {
    expect(await tables()).toEqual(expect.arrayContaining([...CORE_TABLES, 'schema_migrations']));
    expect(await executed()).toEqual(MIGRATIONS.map((m) => m.name));
    expect(await createMigrator(sequelize).pending()).toEqual([]);
  });

  it("every model's columns exist in the migrated tables", async () => {
    const models = initModels(sequelize);
    const qi = sequelize.getQueryInterface();
    for (const model of Object.values(models) as Array<ModelStatic<Model>>) {
      const described = await qi.describeTable(model.getTableName());
      const fields = Object.values(model.getAttributes()).map((a) => a.field ?? '');
      expect(Object.keys(described), model.name).toEqual(expect.arrayContaining(fields));
    }
  });

  it('migrates down to 0 (only the bookkeeping table is left) and up again to the same schema', async () => {
    const before = await tables();
    const migrator = createMigrator(sequelize);
    const down = await migrator.down({ to: 0 });
    expect(down.map((m) => m.name)).toEqual(MIGRATIONS.map((m) => m.name).reverse());
    expect(await tables()).toEqual(['schema_migrations']);
    expect(await executed()).toEqual([]);

    const up = await migrator.up();
    expect(up.map((m) => m.name)).toEqual(MIGRATIONS.map((m) => m.name));
    expect(await tables()).toEqual(before);
    expect(await executed()).toEqual(MIGRATIONS.map((m) => m.name));
  });
});
