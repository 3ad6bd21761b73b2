// The overview's fleet part: counts by flag, silent loggers, lagging sites and the live releases with
// their share and failures — each with the console link that opens the filtered view. The counts read
// through the caller's scope (server/auth/policies.ts), so each matches the view its link opens.
import { QueryTypes, type Sequelize } from 'sequelize';
import type { Actor } from '../auth/actor';
import { loggerScope, siteScope } from '../auth/policies';
import { type FleetFlag } from '../../schemas/fleet';
import { FLEET_FLAGS, type Channel, type ReleaseState } from '../../schemas/words';
import type { Overview } from '../../schemas/overview';
import { CURRENT_RELEASES, FLAG_SQL } from './sql';
import { SQL_WORDS } from '../db/sql-words';

export async function fleetOverview(sequelize: Sequelize, actor: Actor, now: Date): Promise<Overview['fleet']> {
  const loggers = loggerScope(actor, 'l');
  const sites = siteScope(actor, 'l.site_id');
  const replacements = { ...SQL_WORDS, now: now.toISOString(), ...loggers.replacements, ...sites.replacements };
  const [[flags], [lagging], releases] = await Promise.all([
    sequelize.query<Record<FleetFlag, number>>(
      `SELECT ${FLEET_FLAGS.map((f) => `count(*) FILTER (WHERE ${FLAG_SQL[f]})::int AS ${f}`).join(', ')}
         FROM loggers l JOIN models m ON m.id = l.model_id WHERE l.status <> :retired AND ${loggers.sql}`,
      { type: QueryTypes.SELECT, replacements },
    ),
    sequelize.query<{ count: number }>(
      `WITH current_releases AS (${CURRENT_RELEASES})
       SELECT count(DISTINCT l.site_id)::int AS count FROM loggers l
         JOIN current_releases cr ON cr.model_id = l.model_id AND cr.channel = l.channel
        WHERE l.status = :enrolled AND l.site_id IS NOT NULL AND l.firmware IS NOT NULL AND l.firmware_key <> '{}' AND l.firmware_key < cr.version_key
          AND ${sites.sql}`,
      { type: QueryTypes.SELECT, replacements },
    ),
    sequelize.query<{ id: string; model_name: string; version: string; channel: Channel; state: ReleaseState; share: string; installed: number; failed: number }>(
      `SELECT r.id, m.name AS model_name, r.version, r.channel, r.state, r.share,
              (SELECT count(*)::int FROM install_reports ir WHERE ir.release_id = r.id AND ir.state = :installed) AS installed,
              (SELECT count(*)::int FROM install_reports ir WHERE ir.release_id = r.id AND ir.state = :failed) AS failed
         FROM releases r JOIN models m ON m.id = r.model_id
        WHERE r.state IN (:liveStates)
        ORDER BY lower(m.name), r.channel DESC, heliodor_semver_key(r.version) COLLATE "C" DESC`,
      { type: QueryTypes.SELECT, replacements },
    ),
  ]);
  return {
    silent: { count: flags.silent, href: '/loggers?flag=silent' },
    flags: FLEET_FLAGS.map((flag) => ({ flag, count: flags[flag], href: `/loggers?flag=${flag}` })),
    laggingSites: { count: lagging.count, href: '/lagging' },
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
