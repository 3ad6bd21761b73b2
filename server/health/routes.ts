import type { Sequelize } from 'sequelize';
import type { Api } from '../http/api';

/** What boot has finished; GET /api/health is 200 only when everything required is done. */
export type Readiness = { migrated: boolean; seeded: 'complete' | 'skipped' | 'pending' };

export function registerHealthRoutes(api: Api, deps: { sequelize: Sequelize; readiness: Readiness }) {
  api.get('/api/health', async (_req, res) => {
    let database: 'up' | 'down' = 'up';
    try {
      await deps.sequelize.query('SELECT 1');
    } catch {
      database = 'down';
    }
    const { migrated, seeded } = deps.readiness;
    const ready = database === 'up' && migrated && seeded !== 'pending';
    if (!ready) res.setHeader('Retry-After', '5');
    res.status(ready ? 200 : 503).json({
      status: ready ? 'ok' : 'starting',
      database,
      migrations: migrated ? 'complete' : 'pending',
      seed: seeded,
    });
  });
}
