// The Sequelize instance, the migration runner (umzug) and the transaction helper.
import { Sequelize, Transaction } from 'sequelize';
import { Umzug, SequelizeStorage } from 'umzug';
import pg from 'pg';
import { migrations } from './migrations';
import { initModels } from './models';

// BIGINT counts arrive as strings by default; ours stay far below 2^53.
pg.types.setTypeParser(20, (value: string) => Number(value));
// NUMERIC columns (voltages, ratios) as numbers.
pg.types.setTypeParser(1700, (value: string) => Number(value));

export type Database = Sequelize;

export function createDatabase(url: string, options: { poolMax?: number; logging?: boolean } = {}): Sequelize {
  const sequelize = new Sequelize(url, {
    dialect: 'postgres',
    logging: options.logging ? console.log : false,
    pool: { max: options.poolMax ?? 20, min: 0, idle: 10_000, acquire: 10_000 },
    dialectOptions: { application_name: 'heliodor', statement_timeout: 30_000 },
    define: { underscored: true },
  });
  initModels(sequelize);
  return sequelize;
}

export function migrator(sequelize: Sequelize) {
  return new Umzug({
    migrations: migrations.map((m) => ({
      name: m.name,
      up: () => sequelize.transaction((transaction) => m.up(sequelize, transaction)),
      down: () => sequelize.transaction((transaction) => m.down(sequelize, transaction)),
    })),
    storage: new SequelizeStorage({ sequelize, tableName: 'schema_migrations' }),
    logger: undefined,
  });
}

export async function migrate(sequelize: Sequelize): Promise<string[]> {
  const done = await migrator(sequelize).up();
  return done.map((m) => m.name);
}

export async function pendingMigrations(sequelize: Sequelize): Promise<number> {
  return (await migrator(sequelize).pending()).length;
}

/** Runs work in one transaction; everything it writes lands together or not at all. */
export function inTransaction<T>(sequelize: Sequelize, work: (t: Transaction) => Promise<T>): Promise<T> {
  return sequelize.transaction(work);
}
