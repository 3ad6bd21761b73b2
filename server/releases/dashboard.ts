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
//   (trip.ts, rollout/trip.ts), so the dashboard shows what the trip rule will decide.
// - Adoption: confirmed installs per UTC day since the release started.
import { QueryTypes, type Sequelize } from 'sequelize';
import type { Actor } from '../auth/actor';
import { loggerScope } from '../auth/policies';
import { problems } from '../http/problem';
import { tripGauges } from '../rollout/trip';
import { retentionDays } from '../db/retention';
import { failureFigures, resetFigures } from './trip';
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
  started_at: Date | null;
};

type TallyRow = { loggers: number; on_release: number; reached: number; in_progress: number; installed: number; failed: number; median_install_s: number | null };

/** When an install is done: confirmed at a check-in on the new version, else the installed report. */
const DONE_AT = 'COALESCE(ir.confirmed_at, ir.finished_at)';
const INSTALL_S = `EXTRACT(EPOCH FROM (${DONE_AT} - ir.offered_at))`;

/**
 * Enrolled loggers of the release's model and channel, each with its report of this release (if any).
 * Integrators see only loggers they registered or at their sites, as in the fleet table (loggerScope).
 */
const AUDIENCE = `
  FROM loggers l
  LEFT JOIN install_reports ir ON ir.logger_id = l.id AND ir.release_id = :releaseId
 WHERE l.model_id = :modelId AND l.channel = :channel AND l.status = :enrolled`;

const TALLY = `
  count(*)::int AS loggers,
  count(*) FILTER (WHERE l.firmware_key >= heliodor_semver_key(:version) COLLATE "C")::int AS on_release,
  count(ir.logger_id)::int AS reached,
  count(*) FILTER (WHERE ir.state IN (:underWay))::int AS in_progress,
  count(*) FILTER (WHERE ir.state = :installed)::int AS installed,
  count(*) FILTER (WHERE ir.state = :failed)::int AS failed,
  percentile_cont(0.5) WITHIN GROUP (ORDER BY ${INSTALL_S}) FILTER (WHERE ir.state = :installed AND ${DONE_AT} IS NOT NULL) AS median_install_s`;

const tally = (r: TallyRow) => ({
  loggers: Number(r.loggers),
  onRelease: Number(r.on_release),
  reached: Number(r.reached),
  inProgress: Number(r.in_progress),
  installed: Number(r.installed),
  failed: Number(r.failed),
  medianInstallS: r.median_install_s === null ? null : Math.round(Number(r.median_install_s)),
});

async function releaseOf(sequelize: Sequelize, id: string): Promise<ReleaseRow> {
  const [row] = await sequelize.query<ReleaseRow>(
    `SELECT r.id, r.model_id, r.version, r.channel, r.boards, m.boards AS model_boards, r.trip_failure_ratio, r.trip_min_reports,
            r.trip_reset_factor, LEAST(r.piloted_at, r.widened_at, r.completed_at) AS started_at
       FROM releases r JOIN models m ON m.id = r.model_id WHERE r.id = :id`,
    { type: QueryTypes.SELECT, replacements: { id } },
  );
  if (!row) throw problems.notFound('release');
  return row;
}

function scopeOf(actor: Actor, release: ReleaseRow) {
  const readable = loggerScope(actor, 'l');
  return {
    scope: ` AND ${readable.sql}`,
    replacements: { ...SQL_WORDS, releaseId: release.id, modelId: release.model_id, channel: release.channel, version: release.version, ...readable.replacements },
  };
}

/** Sites the release's audience is at, failures first, then installs in progress, then reach; one page. */
export async function releaseSites(deps: DashboardDeps, actor: Actor, releaseId: string, query: ReleaseSitesQuery): Promise<{ rows: ReleaseSiteRow[]; total: number }> {
  const release = await releaseOf(deps.sequelize, releaseId);
  return sitePage(deps, actor, release, query);
}

async function sitePage(deps: DashboardDeps, actor: Actor, release: ReleaseRow, query: ReleaseSitesQuery) {
  const { scope, replacements } = scopeOf(actor, release);
  const rows = await deps.sequelize.query<TallyRow & { site_id: string; site_name: string; customer: string; total: number }>(
    `WITH per_site AS (
       SELECT l.site_id, ${TALLY} ${AUDIENCE} AND l.site_id IS NOT NULL ${scope} GROUP BY l.site_id
     )
     SELECT p.*, s.name AS site_name, s.customer, count(*) OVER ()::int AS total
       FROM per_site p JOIN sites s ON s.id = p.site_id
      ORDER BY p.failed DESC, p.in_progress DESC, p.reached DESC, lower(s.name), s.id
      LIMIT :limit OFFSET :offset`,
    { type: QueryTypes.SELECT, replacements: { ...replacements, limit: query.pageSize, offset: (query.page - 1) * query.pageSize } },
  );
  let total = rows[0]?.total;
  if (total === undefined) {
    // A page past the end: count the sites on their own so the pager still knows where the end is.
    const [c] = await deps.sequelize.query<{ n: number }>(`SELECT count(DISTINCT l.site_id)::int AS n ${AUDIENCE} AND l.site_id IS NOT NULL ${scope}`, {
      type: QueryTypes.SELECT,
      replacements,
    });
    total = c.n;
  }
  return {
    rows: rows.map((r) => ({ siteId: r.site_id, siteName: r.site_name, customer: r.customer, ...tally(r) })),
    total: Number(total),
  };
}

export async function releaseDashboard(deps: DashboardDeps, actor: Actor, releaseId: string): Promise<ReleaseDashboard> {
  const { sequelize } = deps;
  const now = deps.now();
  const release = await releaseOf(sequelize, releaseId);
  const { scope, replacements } = scopeOf(actor, release);
  const [times, boards, sites, failures, resets, installsPerDay] = await Promise.all([
    sequelize.query<{ installs: number; median_s: number | null; p90_s: number | null }>(
      `SELECT count(*)::int AS installs,
              percentile_cont(0.5) WITHIN GROUP (ORDER BY ${INSTALL_S}) AS median_s,
              percentile_cont(0.9) WITHIN GROUP (ORDER BY ${INSTALL_S}) AS p90_s
         FROM install_reports ir WHERE ir.release_id = :releaseId AND ir.state = :installed AND ${DONE_AT} IS NOT NULL`,
      { type: QueryTypes.SELECT, replacements },
    ),
    sequelize.query<TallyRow & { board: string }>(`SELECT l.board, ${TALLY} ${AUDIENCE} ${scope} GROUP BY l.board ORDER BY l.board`, {
      type: QueryTypes.SELECT,
      replacements,
    }),
    sitePage(deps, actor, release, { page: 1, pageSize: 10 }),
    failureFigures(sequelize, undefined, release.id),
    resetFigures(sequelize, undefined, release, now, retentionDays()),
    sequelize.query<{ day: string; n: number }>(
      `SELECT to_char(date_trunc('day', ${DONE_AT} AT TIME ZONE 'UTC'), 'YYYY-MM-DD') AS day, count(*)::int AS n
         FROM install_reports ir WHERE ir.release_id = :releaseId AND ir.state = :installed AND ${DONE_AT} IS NOT NULL
        GROUP BY 1 ORDER BY 1`,
      { type: QueryTypes.SELECT, replacements },
    ),
  ]);

  // Every board of the model is listed, also one with no logger yet, so "not targeted" is visible.
  const found = new Map(boards.map((b) => [b.board, b]));
  const labels = [...new Set([...release.model_boards.map((b) => b.label), ...found.keys()])].sort();
  const empty: TallyRow = { loggers: 0, on_release: 0, reached: 0, in_progress: 0, installed: 0, failed: 0, median_install_s: null };
  const byBoard: ReleaseBoardRow[] = labels.map((board) => ({ board, targeted: release.boards.includes(board), ...tally(found.get(board) ?? empty) }));

  const thresholds = { tripFailureRatio: Number(release.trip_failure_ratio), tripMinReports: release.trip_min_reports, tripResetFactor: Number(release.trip_reset_factor) };
  const t = times[0];
  const seconds = (x: number | null) => (x === null ? null : Math.round(Number(x)));
  return {
    releaseId: release.id,
    generatedAt: now.toISOString(),
    timeToInstall: { installs: Number(t?.installs ?? 0), medianS: seconds(t?.median_s ?? null), p90S: seconds(t?.p90_s ?? null) },
    trip: tripGauges(thresholds, failures, resets),
    byBoard,
    bySite: sites,
    adoption: adoptionDays(release.started_at, installsPerDay, now),
  };
}
