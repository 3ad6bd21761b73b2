import type { Sequelize } from 'sequelize';
import { QueryTypes } from 'sequelize';
import type { Api } from '../http/api';
import type { Overview } from '../../schemas/overview';
import type { Actor } from '../auth/actor';
import { activity, loggerScope, may, siteScope } from '../auth/policies';
import { contextOf } from '../http/context';
import { flagCounts, fleetOverview } from '../fleet/overview';
import { loggerCounts, type Summaries } from '../fleet/summaries';
import { SQL_WORDS } from '../db/sql-words';

export type OverviewDeps = { sequelize: Sequelize; now: () => Date; summaries: Summaries };

/**
 * Fleet numbers for the first screen, counted within what the caller may read (an integrator: their
 * sites and registrations), so each figure matches the list it links to; recent activity for those who
 * may read the log. Logger counts come from the count summary (server/fleet/summaries.ts), silent ones
 * from the silence index at the request's clock (online = enrolled − silent).
 */
export async function overview(deps: OverviewDeps, actor: Actor): Promise<Overview> {
  const { sequelize } = deps;
  const now = deps.now();
  const counted = loggerScope(actor, 'c');
  const sites = siteScope(actor, 's.id');
  const lagging = await deps.summaries.freshen();
  const [[counts], flags, recent] = await Promise.all([
    sequelize.query<Record<string, number>>(
      `SELECT
         COALESCE(sum(c.n), 0)::int AS total,
         COALESCE(sum(c.n) FILTER (WHERE c.status = :registered), 0)::int AS registered,
         COALESCE(sum(c.n) FILTER (WHERE c.status = :enrolled), 0)::int AS enrolled,
         COALESCE(sum(c.n) FILTER (WHERE c.status = :retired), 0)::int AS retired,
         (SELECT count(*) FROM sites s WHERE ${sites.sql})::int AS sites,
         (SELECT count(*) FROM models)::int AS models,
         (SELECT count(*) FROM users WHERE disabled_at IS NULL)::int AS people
       FROM ${loggerCounts(counted)} c`,
      { type: QueryTypes.SELECT, replacements: { ...SQL_WORDS, ...counted.replacements, ...sites.replacements } },
    ),
    flagCounts({ sequelize, now: () => now }, actor, now),
    may(actor, 'read', activity)
      ? sequelize.query<{ id: number; at: Date; actor_name: string; action: string; summary: string }>(
          "SELECT id, at, actor_name, action, summary FROM activity WHERE action <> 'person.signed_in' ORDER BY at DESC, id DESC LIMIT 8",
          { type: QueryTypes.SELECT },
        )
      : Promise.resolve(null),
  ]);
  const fleet = await fleetOverview(sequelize, actor, now, lagging, flags);
  return {
    fleet,
    loggers: {
      total: counts.total,
      registered: counts.registered,
      enrolled: counts.enrolled,
      online: counts.enrolled - flags.silent,
      silent: flags.silent,
      retired: counts.retired,
    },
    sites: counts.sites,
    models: counts.models,
    people: counts.people,
    recentActivity: recent?.map((r) => ({ id: r.id, at: new Date(r.at).toISOString(), actorName: r.actor_name, action: r.action, summary: r.summary })) ?? null,
  };
}

export function registerOverviewRoutes(api: Api, deps: OverviewDeps) {
  api.get('/api/overview', async (req, res) => {
    res.json(await overview(deps, contextOf(req).actor));
  });
}
