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

/**
 * pg's Client with an 'error' listener from birth. Sequelize adds its own listener (which marks the
 * connection invalid and drops it from the pool) only once connect() has answered; a server that ends the
 * session in the same read as its ready message (57P01 when PostgreSQL is stopped with -m fast) would
 * otherwise emit 'error' with nobody listening, and Node ends the process on an unheard 'error' event.
 */
export class GuardedClient extends pg.Client {
  constructor(config?: string | pg.ClientConfig) {
    super(config);
    this.on('error', () => {
      (this as unknown as { _invalid: boolean })._invalid = true;
    });
  }
}

/** The pg module as Sequelize sees it, with the guarded Client (the rest of pg reached through the prototype). */
const guardedPg = Object.create(pg, { Client: { value: GuardedClient } }) as typeof pg;

export function createDatabase(url: string, options: { poolMax?: number; logging?: boolean } = {}): Sequelize {
  const sequelize = new Sequelize(url, {
    dialect: 'postgres',
    dialectModule: guardedPg,
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
