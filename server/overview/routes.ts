import type { Sequelize } from 'sequelize';
import { QueryTypes } from 'sequelize';
import type { Api } from '../http/api';
import type { Overview } from '../../schemas/overview';
import type { Actor } from '../auth/actor';
import { activity, loggerScope, may, siteScope } from '../auth/policies';
import { contextOf } from '../http/context';
import { fleetOverview } from '../fleet/overview';
import { SQL_WORDS } from '../db/sql-words';

/**
 * Fleet numbers for the first screen, in two indexed queries, counted within what the caller may read
 * (an integrator: their sites and registrations), so each figure matches the list it links to; recent
 * activity for those who may read the log.
 */
export async function overview(sequelize: Sequelize, actor: Actor, now: Date): Promise<Overview> {
  const loggers = loggerScope(actor, 'l');
  const sites = siteScope(actor, 's.id');
  const [counts] = await sequelize.query<Record<string, number>>(
    `SELECT
       count(*)::int AS total,
       count(*) FILTER (WHERE l.status = :registered)::int AS registered,
       count(*) FILTER (WHERE l.status = :enrolled)::int AS enrolled,
       count(*) FILTER (WHERE l.status = :enrolled AND l.last_seen_at >= :now::timestamptz - make_interval(secs => 3 * m.check_in_interval_s))::int AS online,
       count(*) FILTER (WHERE l.status = :enrolled AND (l.last_seen_at IS NULL OR l.last_seen_at < :now::timestamptz - make_interval(secs => 3 * m.check_in_interval_s)))::int AS silent,
       count(*) FILTER (WHERE l.status = :retired)::int AS retired,
       (SELECT count(*) FROM sites s WHERE ${sites.sql})::int AS sites,
       (SELECT count(*) FROM models)::int AS models,
       (SELECT count(*) FROM users WHERE disabled_at IS NULL)::int AS people
     FROM loggers l JOIN models m ON m.id = l.model_id WHERE ${loggers.sql}`,
    { type: QueryTypes.SELECT, replacements: { ...SQL_WORDS, now: now.toISOString(), ...loggers.replacements, ...sites.replacements } },
  );
  const recent = may(actor, 'read', activity)
    ? await sequelize.query<{ id: number; at: Date; actor_name: string; action: string; summary: string }>(
        "SELECT id, at, actor_name, action, summary FROM activity WHERE action <> 'person.signed_in' ORDER BY at DESC, id DESC LIMIT 8",
        { type: QueryTypes.SELECT },
      )
    : null;
  const fleet = await fleetOverview(sequelize, actor, now);
  return {
    fleet,
    loggers: {
      total: counts.total,
      registered: counts.registered,
      enrolled: counts.enrolled,
      online: counts.online,
      silent: counts.silent,
      retired: counts.retired,
    },
    sites: counts.sites,
    models: counts.models,
    people: counts.people,
    recentActivity: recent?.map((r) => ({ id: r.id, at: new Date(r.at).toISOString(), actorName: r.actor_name, action: r.action, summary: r.summary })) ?? null,
  };
}

export function registerOverviewRoutes(api: Api, deps: { sequelize: Sequelize; now: () => Date }) {
  api.get('/api/overview', async (req, res) => {
    res.json(await overview(deps.sequelize, contextOf(req).actor, deps.now()));
  });
}
