// The overview's fleet part: counts by flag, silent loggers, lagging sites and the live releases with
// their share and failures — each with the console link that opens the filtered view. Everything reads
// through the caller's scope (server/auth/policies.ts), so each figure matches the view its link opens,
// and an integrator's figures count only their sites and registrations.
//
// The flags are counted at request time by the fleet table's own flag filter (table.ts countFlag), each an
// index range: a flag matches a few per cent of the fleet, so the count is cheap and exact at the
// request's clock. Lagging sites come from the lagging summary (summaries.ts, with its `asOf`), live
// releases' installs and failures from the install report counts.
import { QueryTypes, type Sequelize } from 'sequelize';
import type { Actor } from '../auth/actor';
import { loggerScope, siteScope } from '../auth/policies';
import { type FleetFlag } from '../../schemas/fleet';
import { FLEET_FLAGS, type Channel, type ReleaseState } from '../../schemas/words';
import type { Overview } from '../../schemas/overview';
import { countFlag, type FleetDeps } from './table';
import { SQL_WORDS } from '../db/sql-words';
import { reportCounts, type Freshness } from './summaries';

/** Loggers with each flag the actor may read, at `now`: the fleet table's own count of its flag filter. */
export async function flagCounts(deps: FleetDeps, actor: Actor, now: Date): Promise<Record<FleetFlag, number>> {
  const counts = await Promise.all(FLEET_FLAGS.map(async (flag) => [flag, await countFlag(deps, actor, flag, now)] as const));
  return Object.fromEntries(counts) as Record<FleetFlag, number>;
}

export async function fleetOverview(
  sequelize: Sequelize,
  actor: Actor,
  now: Date,
  lagging: Freshness,
  flags: Record<FleetFlag, number>,
): Promise<Overview['fleet']> {
  const sites = siteScope(actor, 'g.site_id');
  const reports = reportCounts(loggerScope(actor, 'c'));
  const replacements = { ...SQL_WORDS, ...sites.replacements, ...loggerScope(actor, 'c').replacements };
  const [[laggingCount], releases] = await Promise.all([
    sequelize.query<{ count: number }>(`SELECT count(*)::int AS count FROM lagging_sites g WHERE ${sites.sql}`, { type: QueryTypes.SELECT, replacements }),
    sequelize.query<{ id: string; model_name: string; version: string; channel: Channel; state: ReleaseState; share: string; installed: number; failed: number }>(
      `WITH live AS (SELECT r.id FROM releases r WHERE r.state IN (:liveStates)),
       tally AS (
         SELECT c.release_id, COALESCE(sum(c.n) FILTER (WHERE c.state = :installed), 0)::int AS installed,
                COALESCE(sum(c.n) FILTER (WHERE c.state = :failed), 0)::int AS failed
           FROM ${reports} c WHERE c.release_id IN (SELECT id FROM live) GROUP BY c.release_id
       )
       SELECT r.id, m.name AS model_name, r.version, r.channel, r.state, r.share, COALESCE(t.installed, 0) AS installed, COALESCE(t.failed, 0) AS failed
         FROM releases r JOIN models m ON m.id = r.model_id LEFT JOIN tally t ON t.release_id = r.id
        WHERE r.state IN (:liveStates)
        ORDER BY lower(m.name), r.channel DESC, heliodor_semver_key(r.version) COLLATE "C" DESC`,
      { type: QueryTypes.SELECT, replacements },
    ),
  ]);
  return {
    silent: { count: flags.silent, href: '/loggers?flag=silent' },
    flags: FLEET_FLAGS.map((flag) => ({ flag, count: flags[flag], href: `/loggers?flag=${flag}` })),
    laggingSites: { count: laggingCount.count, href: '/lagging', ...lagging },
    liveReleases: releases.map((r) => ({
      id: r.id,
      modelName: r.model_name,
      version: r.version,
      channel: r.channel,
      state: r.state,
      share: Number(r.share),
      installed: r.installed,
      failed: r.failed,
      href: `/releases/${r.id}`,
    })),
  };
}
