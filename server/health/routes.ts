// Health for people and for process supervisors:
// - GET /api/health/live: the process answers (nothing else is asked; a supervisor restarts a process
//   that stops answering);
// - GET /api/health/ready: the database answers and every migration this build knows has run (a load
//   balancer sends traffic only then); while the database is away it says "database unreachable";
// - GET /api/health: the same readiness with the demo seed, for people and the benchmark's baseline.
import type { Sequelize } from 'sequelize';
import { QueryTypes } from 'sequelize';
import type { Api } from '../http/api';
import { migrations } from '../db/migrations';
import { sqlStateOf } from '../http/errors';

/** What boot has finished; GET /api/health is 200 only when everything required is done. */
export type Readiness = { migrated: boolean; seeded: 'complete' | 'skipped' | 'pending' };

type Check = { database: 'up' | 'down'; migrations: 'complete' | 'pending' };

/** Asks the database which migrations have run: one query that also proves it answers. */
async function checkDatabase(sequelize: Sequelize, readiness: Readiness): Promise<Check> {
  try {
    const rows = await sequelize.query<{ name: string }>('SELECT name FROM schema_migrations', { type: QueryTypes.SELECT });
    const done = new Set(rows.map((r) => r.name));
    const complete = readiness.migrated && migrations.every((m) => done.has(m.name));
    return { database: 'up', migrations: complete ? 'complete' : 'pending' };
  } catch (err) {
    // 42P01 undefined_table: the database answers, but no migration has run yet.
    if (sqlStateOf(err) === '42P01') return { database: 'up', migrations: 'pending' };
    return { database: 'down', migrations: readiness.migrated ? 'complete' : 'pending' };
  }
}

const statusOf = (check: Check, seeded: Readiness['seeded'] | 'skipped') =>
  check.database === 'down' ? 'database unreachable' : check.migrations === 'pending' ? 'migrations pending' : seeded === 'pending' ? 'starting' : 'ready';

export function registerHealthRoutes(api: Api, deps: { sequelize: Sequelize; readiness: Readiness; now: () => Date }) {
  const started = Date.now();

  api.get('/api/health/live', (_req, res) => {
    res.setHeader('Cache-Control', 'no-store');
    res.json({ status: 'live', uptimeS: Math.floor((Date.now() - started) / 1000) });
  });

  api.get('/api/health/ready', async (_req, res) => {
    const check = await checkDatabase(deps.sequelize, deps.readiness);
    const status = statusOf(check, 'skipped');
    res.setHeader('Cache-Control', 'no-store');
    if (status !== 'ready') res.setHeader('Retry-After', '5');
    res.status(status === 'ready' ? 200 : 503).json({ status, ...check });
  });

  api.get('/api/health', async (_req, res) => {
    const check = await checkDatabase(deps.sequelize, deps.readiness);
    const { seeded } = deps.readiness;
    const status = statusOf(check, seeded);
    res.setHeader('Cache-Control', 'no-store');
    if (status !== 'ready') res.setHeader('Retry-After', '5');
    res.status(status === 'ready' ? 200 : 503).json({ status: status === 'ready' ? 'ok' : status, ...check, seed: seeded });
  });
}
