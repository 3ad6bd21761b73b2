// The reference recomputation of the fleet summaries (server/fleet/summaries.ts): the full scans the
// overview, the version matrix, the lagging sites and the release dashboard ran before the summaries,
// read straight from loggers and install_reports, and the summaries as their readers see them. A test
// changes the fleet and checks that both agree.
import { QueryTypes, type Sequelize } from 'sequelize';
import { SQL_WORDS } from '../../server/db/sql-words';
import { CURRENT_RELEASES, FLAG_SQL, SILENT } from '../../server/fleet/sql';
import { DECISION_COLUMNS, decisionsFor, type LoggerForDecision } from '../../server/fleet/verdicts';
import { reasonOf } from '../../server/fleet/reasons';
import { FLEET_FLAGS } from '../../schemas/words';
import type { SqlScope } from '../../server/auth/policies';

const sorted = <T>(rows: T[]) => rows.map((r) => JSON.stringify(r)).sort();

/** Loggers by site, registrar, model, channel, board, status and version: a scan, and the summary (table + unfolded changes). */
export async function loggerCounts(sequelize: Sequelize) {
  const key = 'site_id, registered_by, model_id, channel, board, status, firmware';
  const scan = await sequelize.query(`SELECT ${key}, count(*)::int AS n FROM loggers GROUP BY ${key}`, { type: QueryTypes.SELECT });
  const perSite = await sequelize.query(
    `SELECT ${key}, sum(n)::int AS n FROM (SELECT ${key}, n FROM site_logger_counts UNION ALL SELECT ${key}, n FROM logger_count_changes) c
      GROUP BY ${key} HAVING sum(n) <> 0`,
    { type: QueryTypes.SELECT },
  );
  const fleetKey = 'model_id, channel, board, status, firmware';
  const fleetScan = await sequelize.query(`SELECT ${fleetKey}, count(*)::int AS n FROM loggers GROUP BY ${fleetKey}`, { type: QueryTypes.SELECT });
  const fleetWide = await sequelize.query(
    `SELECT ${fleetKey}, sum(n)::int AS n FROM (SELECT ${fleetKey}, n FROM fleet_logger_counts UNION ALL SELECT ${fleetKey}, n FROM logger_count_changes) c
      GROUP BY ${fleetKey} HAVING sum(n) <> 0`,
    { type: QueryTypes.SELECT },
  );
  return { scan: sorted(scan), perSite: sorted(perSite), fleetScan: sorted(fleetScan), fleetWide: sorted(fleetWide) };
}

/** Install reports by release, site, registrar, board, channel, status, state and adoption day: a scan, and the summary. */
export async function reportCounts(sequelize: Sequelize) {
  const scan = await sequelize.query(
    `SELECT ir.release_id, l.site_id, l.registered_by, l.board, l.channel, l.status, ir.state,
            to_char((COALESCE(ir.confirmed_at, ir.finished_at) AT TIME ZONE 'UTC')::date, 'YYYY-MM-DD') AS day, count(*)::int AS n
       FROM install_reports ir JOIN loggers l ON l.id = ir.logger_id GROUP BY 1, 2, 3, 4, 5, 6, 7, 8`,
    { type: QueryTypes.SELECT },
  );
  const key = 'release_id, site_id, registered_by, board, channel, status, state, day';
  const summary = await sequelize.query(
    `SELECT release_id, site_id, registered_by, board, channel, status, state, to_char(day, 'YYYY-MM-DD') AS day, sum(n)::int AS n
       FROM (SELECT ${key}, n FROM site_report_counts UNION ALL SELECT ${key}, n FROM report_count_changes) c
      GROUP BY 1, 2, 3, 4, 5, 6, 7, 8 HAVING sum(n) <> 0`,
    { type: QueryTypes.SELECT },
  );
  return { scan: sorted(scan), summary: sorted(summary) };
}

type Behind = LoggerForDecision & { serial: string; silent: boolean; currentId: string; currentVersion: string; since: Date };

/**
 * Every enrolled logger behind the current release of its channel with its reason, decided now (the
 * scan the lagging sites ran per request), and the lagging summary's rows; with the per-site roll-ups.
 */
export async function lagging(sequelize: Sequelize, now: Date) {
  const rows = await sequelize.query<Behind>(
    `WITH current_releases AS (${CURRENT_RELEASES})
     SELECT ${DECISION_COLUMNS}, l.serial, ${SILENT} AS silent, cr.id AS "currentId", cr.version AS "currentVersion", cr.since
       FROM loggers l JOIN models m ON m.id = l.model_id JOIN sites s ON s.id = l.site_id
       JOIN current_releases cr ON cr.model_id = l.model_id AND cr.channel = l.channel
      WHERE l.status = :enrolled AND l.firmware IS NOT NULL AND l.firmware_key <> '{}' AND l.firmware_key < cr.version_key`,
    { type: QueryTypes.SELECT, replacements: { ...SQL_WORDS, now: now.toISOString() } },
  );
  const decisions = await decisionsFor(sequelize, rows, now);
  const scan = rows.map((r) => ({ logger: r.id, site: r.siteId, target: r.currentId, ...reasonOf(r, decisions.get(r.id)) }));
  const summary = await sequelize.query<{ logger: string; site: string; target: string; reason: string; detail: string }>(
    'SELECT logger_id AS logger, site_id AS site, target_release_id AS target, reason, detail FROM lagging_loggers',
    { type: QueryTypes.SELECT },
  );
  const sitesScan = await sequelize.query(
    `WITH current_releases AS (${CURRENT_RELEASES})
     SELECT l.site_id, count(*)::int AS behind, (array_agg(l.firmware ORDER BY l.firmware_key))[1] AS oldest_version, min(cr.since) AS lagging_since
       FROM loggers l JOIN current_releases cr ON cr.model_id = l.model_id AND cr.channel = l.channel
      WHERE l.status = :enrolled AND l.site_id IS NOT NULL AND l.firmware IS NOT NULL AND l.firmware_key <> '{}' AND l.firmware_key < cr.version_key
      GROUP BY l.site_id`,
    { type: QueryTypes.SELECT, replacements: { ...SQL_WORDS } },
  );
  const sitesSummary = await sequelize.query('SELECT site_id, behind, oldest_version, lagging_since FROM lagging_sites', { type: QueryTypes.SELECT });
  const reasonsScan: Record<string, Record<string, number>> = {};
  for (const r of scan) reasonsScan[r.site!] = { ...reasonsScan[r.site!], [r.reason]: (reasonsScan[r.site!]?.[r.reason] ?? 0) + 1 };
  const reasonsSummary = Object.fromEntries(
    (await sequelize.query<{ site_id: string; reasons: Record<string, number> }>('SELECT site_id, reasons FROM lagging_sites', { type: QueryTypes.SELECT })).map((r) => [
      r.site_id,
      r.reasons,
    ]),
  );
  return {
    scan: sorted(scan),
    summary: sorted(summary),
    sitesScan: sorted(sitesScan),
    sitesSummary: sorted(sitesSummary),
    reasonsScan,
    reasonsSummary,
  };
}

/** Loggers with each flag within a scope at `now`: the scan the overview ran per request. */
export async function flagScan(sequelize: Sequelize, scope: SqlScope, now: Date): Promise<Record<string, number>> {
  const [row] = await sequelize.query<Record<string, number>>(
    `SELECT ${FLEET_FLAGS.map((f) => `count(*) FILTER (WHERE ${FLAG_SQL[f]})::int AS ${f}`).join(', ')}
       FROM loggers l JOIN models m ON m.id = l.model_id WHERE l.status <> :retired AND ${scope.sql}`,
    { type: QueryTypes.SELECT, replacements: { ...SQL_WORDS, now: now.toISOString(), ...scope.replacements } },
  );
  return row;
}
