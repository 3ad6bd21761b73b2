// The overview's fleet part: counts by flag, silent loggers, lagging sites and the live releases with
// their share and failures — each with the console link that opens the filtered view. Everything reads
// through the caller's scope (server/auth/policies.ts), so each figure matches the view its link opens,
// and an integrator's figures count only their sites and registrations.
//
// The flags are counted at request time, each by an index range (migration 0014_summaries): a flag
// matches a few per cent of the fleet, so the count is cheap and exact at the request's clock. Lagging
// sites come from the lagging summary (summaries.ts, with its `asOf`), live releases' installs and
// failures from the install report counts.
import { QueryTypes, type Sequelize } from 'sequelize';
import type { Actor } from '../auth/actor';
import { loggerScope, siteScope } from '../auth/policies';
import { type FleetFlag } from '../../schemas/fleet';
import { FLEET_FLAGS, type Channel, type ReleaseState } from '../../schemas/words';
import type { Overview } from '../../schemas/overview';
import { FLAG_SQL } from './sql';
import { SQL_WORDS } from '../db/sql-words';
import { reportCounts, type Freshness } from './summaries';

/** The condition each flag's index answers (migration 0014_summaries), ANDed to the flag's own rule. */
const FLAG_ACCESS: Record<FleetFlag, string> = {
  silent: 'TRUE', // loggers_silence_idx (model_id, last_seen_at) of enrolled loggers
  unstable: `l.recent_resets <> '{}' AND l.status <> :retired`, // loggers_resets_idx
  low_supply: 'TRUE', // loggers_supply_idx (model_id, supply_v)
  probe_fault: 'TRUE', // loggers_probe_idx (the probe reading)
};

/** Loggers with each flag the actor may read, at `now`. */
export async function flagCounts(sequelize: Sequelize, actor: Actor, now: Date): Promise<Record<FleetFlag, number>> {
  const scope = loggerScope(actor, 'l');
  const replacements = { ...SQL_WORDS, now: now.toISOString(), ...scope.replacements };
  const counts = await Promise.all(
    FLEET_FLAGS.map(async (flag) => {
      // Per model, so the model's interval and supply guard are constants of the index range.
      const [row] = await sequelize.query<{ n: number }>(
        `SELECT count(*)::int AS n FROM models m
           CROSS JOIN LATERAL (SELECT 1 FROM loggers l WHERE l.model_id = m.id AND ${FLAG_ACCESS[flag]} AND ${FLAG_SQL[flag]} AND ${scope.sql}) x`,
        { type: QueryTypes.SELECT, replacements },
      );
      return [flag, row.n] as const;
    }),
  );
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
