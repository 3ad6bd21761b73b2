// The release dashboard: how far a release has gone and how it is doing, beside the funnel
// the release itself carries (presenter.ts installCounts).
//
// - Time to install: from the first offer (offered_at) to the install confirmed at a check-in on the
//   new version (confirmed_at), or to the installed report while the confirmation is still due. A retry
//   keeps the first offer, so a retried install counts its whole wait. Median and 90th percentile by
//   PostgreSQL's percentile_cont (linear interpolation between the middle values).
// - Per board and per site: the enrolled loggers of the release's model and channel (the release's
//   audience), how many run it or newer, and the install reports in each group. Sites list failures
//   first, then installs in progress, so support reads the trouble at the top; paged in PostgreSQL.
// - The trip points with their current values, read by the same queries and rules as the trip
//   (trip.ts, rollout/trip.ts, rollout/drift.ts for the measurement-drift gauge), so the dashboard shows
//   what the trip rule will decide.
// - Adoption: confirmed installs per UTC day since the release started.
import { QueryTypes, type Sequelize } from 'sequelize';
import type { Actor } from '../auth/actor';
import { loggerScope, type SqlScope } from '../auth/policies';
import { loggerCounts, reportCounts } from '../fleet/summaries';
import { problems } from '../http/problem';
import { tripGauges } from '../rollout/trip';
import { retentionDays } from '../db/retention';
import { driftInput, failureFigures, resetFigures } from './trip';
import { driftFigures, driftGauge, driftTripPointsOf } from '../rollout/drift';
import { adoptionDays } from '../fleet/versions';
import { UNDER_WAY_INSTALL_STATES, type InstallState, type LoggerStatus } from '../../schemas/words';
import type { ReleaseBoardRow, ReleaseDashboard, ReleaseSiteRow, ReleaseSitesQuery } from '../../schemas/releases';
import { SQL_WORDS } from '../db/sql-words';

export type DashboardDeps = { sequelize: Sequelize; now: () => Date };

type ReleaseRow = {
  id: string;
  model_id: string;
  version: string;
  channel: string;
  boards: string[];
  model_boards: { label: string }[];
  trip_failure_ratio: string;
  trip_min_reports: number;
  trip_reset_factor: string;
  trip_drift_energy: string;
  trip_drift_temp_c: string;
  trip_drift_flagged: string;
  started_at: Date | null;
};

type TallyRow = { loggers: number; on_release: number; reached: number; in_progress: number; installed: number; failed: number; median_install_s: number | null };

/** When an install is done: confirmed at a check-in on the new version, else the installed report. */
const DONE_AT = 'COALESCE(ir.confirmed_at, ir.finished_at)';
const INSTALL_S = `EXTRACT(EPOCH FROM (${DONE_AT} - ir.offered_at))`;

/**
 * The release's audience by `group` (board or site): enrolled loggers of its model and channel, those on
 * the release or newer, and their install reports of it by state, from the count summaries
 * (server/fleet/summaries.ts). Integrators count only loggers they registered or at their sites, as in the
 * fleet table (loggerScope).
 */
function tallies(group: 'board' | 'site_id', scope: SqlScope) {
  const perSite = group === 'site_id';
  return `
    audience AS (
      SELECT c.${group} AS key, sum(c.n)::int AS loggers,
             COALESCE(sum(c.n) FILTER (WHERE c.firmware_key >= heliodor_semver_key(:version) COLLATE "C"), 0)::int AS on_release
        FROM ${loggerCounts(scope, perSite)} c
       WHERE c.model_id = :modelId AND c.channel = :channel AND c.status = :enrolled ${perSite ? 'AND c.site_id IS NOT NULL' : ''}
       GROUP BY 1 HAVING sum(c.n) <> 0
    ),
    reports AS (
      SELECT c.${group} AS key, sum(c.n)::int AS reached,
             COALESCE(sum(c.n) FILTER (WHERE c.state IN (:underWay)), 0)::int AS in_progress,
             COALESCE(sum(c.n) FILTER (WHERE c.state = :installed), 0)::int AS installed,
             COALESCE(sum(c.n) FILTER (WHERE c.state = :failed), 0)::int AS failed
        FROM ${reportCounts(scope, perSite)} c
       WHERE c.release_id = :releaseId AND c.channel = :channel AND c.status = :enrolled
       GROUP BY 1
    ),
    tally AS (
      SELECT a.key, a.loggers, a.on_release, COALESCE(r.reached, 0) AS reached, COALESCE(r.in_progress, 0) AS in_progress,
             COALESCE(r.installed, 0) AS installed, COALESCE(r.failed, 0) AS failed
        FROM audience a LEFT JOIN reports r ON r.key = a.key
    )`;
}

/** Median seconds to install by `group`, over the release's installed reports of the audience (of `keys` when given). */
async function medians(deps: DashboardDeps, group: 'board' | 'site_id', release: ReleaseRow, readable: SqlScope, keys?: string[]): Promise<Map<string, number | null>> {
  if (keys && keys.length === 0) return new Map();
  const rows = await deps.sequelize.query<{ key: string; median_s: number | null }>(
    `SELECT l.${group} AS key, percentile_cont(0.5) WITHIN GROUP (ORDER BY ${INSTALL_S}) AS median_s
       FROM install_reports ir JOIN loggers l ON l.id = ir.logger_id
      WHERE ir.release_id = :releaseId AND ir.state = :installed AND ${DONE_AT} IS NOT NULL
        AND l.model_id = :modelId AND l.channel = :channel AND l.status = :enrolled AND ${readable.sql}
        ${keys ? `AND l.${group} IN (:keys)` : ''}
      GROUP BY 1`,
    { type: QueryTypes.SELECT, replacements: { ...SQL_WORDS, ...readable.replacements, releaseId: release.id, modelId: release.model_id, channel: release.channel, keys } },
  );
  return new Map(rows.map((r) => [r.key, r.median_s]));
}

const tally = (r: Omit<TallyRow, 'median_install_s'>, median: number | null | undefined) => ({
  loggers: Number(r.loggers),
  onRelease: Number(r.on_release),
  reached: Number(r.reached),
  inProgress: Number(r.in_progress),
  installed: Number(r.installed),
  failed: Number(r.failed),
  medianInstallS: median === null || median === undefined ? null : Math.round(Number(median)),
});

async function releaseOf(sequelize: Sequelize, id: string): Promise<ReleaseRow> {
  const [row] = await sequelize.query<ReleaseRow>(
    `SELECT r.id, r.model_id, r.version, r.channel, r.boards, m.boards AS model_boards, r.trip_failure_ratio, r.trip_min_reports,
            r.trip_reset_factor, r.trip_drift_energy, r.trip_drift_temp_c, r.trip_drift_flagged, LEAST(r.piloted_at, r.widened_at, r.completed_at) AS started_at
       FROM releases r JOIN models m ON m.id = r.model_id WHERE r.id = :id`,
    { type: QueryTypes.SELECT, replacements: { id } },
  );
  if (!row) throw problems.notFound('release');
  return row;
}

function scopeOf(actor: Actor, release: ReleaseRow) {
  const counted = loggerScope(actor, 'c');
  return {
    counted,
    readable: loggerScope(actor, 'l'),
    replacements: { ...SQL_WORDS, releaseId: release.id, modelId: release.model_id, channel: release.channel, version: release.version, ...counted.replacements },
  };
}

/** Sites the release's audience is at, failures first, then installs in progress, then reach; one page. */
export async function releaseSites(deps: DashboardDeps, actor: Actor, releaseId: string, query: ReleaseSitesQuery): Promise<{ rows: ReleaseSiteRow[]; total: number }> {
  const release = await releaseOf(deps.sequelize, releaseId);
  return sitePage(deps, actor, release, query);
}

async function sitePage(deps: DashboardDeps, actor: Actor, release: ReleaseRow, query: ReleaseSitesQuery) {
  const { counted, readable, replacements } = scopeOf(actor, release);
  const [rows, [{ total }]] = await Promise.all([
    deps.sequelize.query<Omit<TallyRow, 'median_install_s'> & { key: string; site_name: string; customer: string }>(
      `WITH ${tallies('site_id', counted)}
       SELECT t.*, s.name AS site_name, s.customer
         FROM tally t JOIN sites s ON s.id = t.key
        ORDER BY t.failed DESC, t.in_progress DESC, t.reached DESC, lower(s.name), s.id
        LIMIT :limit OFFSET :offset`,
      { type: QueryTypes.SELECT, replacements: { ...replacements, limit: query.pageSize, offset: (query.page - 1) * query.pageSize } },
    ),
    deps.sequelize.query<{ total: number }>(`WITH ${tallies('site_id', counted)} SELECT count(*)::int AS total FROM tally`, { type: QueryTypes.SELECT, replacements }),
  ]);
  const median = await medians(deps, 'site_id', release, readable, rows.map((r) => r.key));
  return {
    rows: rows.map((r) => ({ siteId: r.key, siteName: r.site_name, customer: r.customer, ...tally(r, median.get(r.key)) })),
    total: Number(total),
  };
}

export async function releaseDashboard(deps: DashboardDeps, actor: Actor, releaseId: string): Promise<ReleaseDashboard> {
  const { sequelize } = deps;
  const now = deps.now();
  const release = await releaseOf(sequelize, releaseId);
  const { counted, readable, replacements } = scopeOf(actor, release);
  // Time to install and adoption count the installs the caller may read; the trip gauges are the
  // trip rule's own figures (the whole release), so they show what the rule will decide.
  const installed = `FROM install_reports ir WHERE ir.release_id = :releaseId AND ir.state = :installed AND ${DONE_AT} IS NOT NULL
    ${readable.sql === 'TRUE' ? '' : `AND ir.logger_id IN (SELECT l.id FROM loggers l WHERE ${readable.sql})`}`;
  const [times, boards, boardMedians, sites, failures, resets, drift, installsPerDay] = await Promise.all([
    sequelize.query<{ installs: number; median_s: number | null; p90_s: number | null }>(
      `SELECT count(*)::int AS installs,
              percentile_cont(0.5) WITHIN GROUP (ORDER BY ${INSTALL_S}) AS median_s,
              percentile_cont(0.9) WITHIN GROUP (ORDER BY ${INSTALL_S}) AS p90_s
         ${installed}`,
      { type: QueryTypes.SELECT, replacements: { ...replacements, ...readable.replacements } },
    ),
    sequelize.query<Omit<TallyRow, 'median_install_s'> & { key: string }>(`WITH ${tallies('board', counted)} SELECT * FROM tally ORDER BY key`, {
      type: QueryTypes.SELECT,
      replacements,
    }),
    medians(deps, 'board', release, readable),
    sitePage(deps, actor, release, { page: 1, pageSize: 10 }),
    failureFigures(sequelize, undefined, release.id),
    resetFigures(sequelize, undefined, release, now, retentionDays()),
    driftInput(sequelize, undefined, release, now, retentionDays()),
    sequelize.query<{ day: string; n: number }>(
      `SELECT to_char(c.day, 'YYYY-MM-DD') AS day, sum(c.n)::int AS n FROM ${reportCounts(counted)} c
        WHERE c.release_id = :releaseId AND c.state = :installed AND c.day IS NOT NULL
        GROUP BY 1 HAVING sum(c.n) <> 0 ORDER BY 1`,
      { type: QueryTypes.SELECT, replacements },
    ),
  ]);

  // Every board of the model is listed, also one with no logger yet, so "not targeted" is visible.
  const found = new Map(boards.map((b) => [b.key, b]));
  const labels = [...new Set([...release.model_boards.map((b) => b.label), ...found.keys()])].sort();
  const empty = { loggers: 0, on_release: 0, reached: 0, in_progress: 0, installed: 0, failed: 0 };
  const byBoard: ReleaseBoardRow[] = labels.map((board) => ({ board, targeted: release.boards.includes(board), ...tally(found.get(board) ?? empty, boardMedians.get(board)) }));

  const thresholds = { tripFailureRatio: Number(release.trip_failure_ratio), tripMinReports: release.trip_min_reports, tripResetFactor: Number(release.trip_reset_factor) };
  const t = times[0];
  const seconds = (x: number | null) => (x === null ? null : Math.round(Number(x)));
  return {
    releaseId: release.id,
    generatedAt: now.toISOString(),
    timeToInstall: { installs: Number(t?.installs ?? 0), medianS: seconds(t?.median_s ?? null), p90S: seconds(t?.p90_s ?? null) },
    trip: {
      ...tripGauges(thresholds, failures, resets),
      drift: driftGauge(
        driftTripPointsOf({ tripDriftEnergy: release.trip_drift_energy, tripDriftTempC: release.trip_drift_temp_c, tripDriftFlagged: release.trip_drift_flagged }),
        driftFigures(drift),
      ),
    },
    byBoard,
    bySite: sites,
    adoption: adoptionDays(release.started_at, installsPerDay, now),
  };
}
