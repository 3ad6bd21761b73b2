// The trip rules at work: the figures they judge, read from install reports and the check-in history,
// and the stop when one of them trips (rules and verdicts: rollout/trip.ts). The release dashboard reads
// the same figures for its gauges, so it shows what the rule decides.
//
// Called inside a check-in's transaction with the release row locked (SELECT … FOR UPDATE, taken after
// the check-in wrote the report that changed the figures). Check-ins that change a release's figures
// serialise on it, and each reads them after taking the lock, in a fresh snapshot (READ COMMITTED), so it
// sees every change committed before it plus its own: exactly one of them stops the release, and every
// report is counted.
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import type { Release } from '../db/models';
import { retentionDays } from '../db/retention';
import { isLive } from '../rollout/lifecycle';
import { failureRatioVerdict, RESET_MIN_HOURS, resetRateVerdict, type FailureFigures, type ResetFigures, type TripPoints, type TripVerdict } from '../rollout/trip';
import { DRIFT_WINDOW_DAYS, driftFigures, driftTripPointsOf, driftVerdict, type DriftDay, type DriftInput } from '../rollout/drift';
import { SQL_WORDS } from '../db/sql-words';
import { COUNTED_RESET_REASONS, TRANSIENT_FAILURE_REASONS, type FailureReason, type InstallState } from '../../schemas/words';
import { applyTransition, type TransitionContext } from './transitions';

const INSTALLED: InstallState = 'installed';
const FAILED: InstallState = 'failed';
/** A failure reported without a reason counts as other. */
const OTHER: FailureReason = 'other';

/** Finished installs of a release: installed, and failed for a reason that is not transient (no reason counts as other). */
export async function failureFigures(sequelize: Sequelize, t: Transaction | undefined, releaseId: string): Promise<FailureFigures> {
  const [row] = await sequelize.query<{ installed: number; failed: number }>(
    `SELECT count(*) FILTER (WHERE state = :installed)::int AS installed,
            count(*) FILTER (WHERE state = :failed AND COALESCE(reason, :other) NOT IN (:transient))::int AS failed
       FROM install_reports WHERE release_id = :id`,
    { transaction: t, type: QueryTypes.SELECT, replacements: { id: releaseId, installed: INSTALLED, failed: FAILED, other: OTHER, transient: [...TRANSIENT_FAILURE_REASONS] } },
  );
  return { installed: Number(row?.installed ?? 0), failed: Number(row?.failed ?? 0) };
}

/** The counted resets (watchdog and brown-out) of one check-in row `c` (bigint: counts may reach 2^31 − 1 each). */
const RESETS = `(SELECT COALESCE(sum(n.value::bigint), 0) FROM jsonb_each_text(c.resets) n WHERE n.key IN (:countedResets))`;

/** The reset-rate figures of a release: its cohort on the new version against the same loggers before it. */
export async function resetFigures(
  sequelize: Sequelize,
  t: Transaction | undefined,
  release: { id: string; version: string },
  now: Date,
  retentionDays: number,
): Promise<ResetFigures> {
  const [row] = await sequelize.query<ResetFigures>(
    `WITH confirmed AS (
       SELECT logger_id, confirmed_at FROM install_reports WHERE release_id = :id AND confirmed_at IS NOT NULL AND confirmed_at <= :now
     ),
     after AS (
       SELECT k.logger_id, k.confirmed_at, COALESCE(sum(${RESETS}), 0) AS resets,
              EXTRACT(EPOCH FROM (COALESCE(max(c.at), k.confirmed_at) - k.confirmed_at)) / 86400 AS days
         FROM confirmed k LEFT JOIN check_ins c ON c.logger_id = k.logger_id AND c.at > k.confirmed_at AND c.at <= :now AND c.firmware = :version
        GROUP BY k.logger_id, k.confirmed_at
     ),
     cohort AS (SELECT * FROM after WHERE days * 24 >= :minHours),
     before AS (
       SELECT k.logger_id, COALESCE(sum(${RESETS}), 0) AS resets,
              EXTRACT(EPOCH FROM (k.confirmed_at - COALESCE(min(c.at), k.confirmed_at))) / 86400 AS days
         FROM cohort k LEFT JOIN check_ins c ON c.logger_id = k.logger_id AND c.at < k.confirmed_at
              AND c.at >= k.confirmed_at - make_interval(days => :retention) AND c.firmware <> :version
        GROUP BY k.logger_id, k.confirmed_at
     )
     SELECT (SELECT count(*) FROM cohort)::int AS loggers,
            (SELECT COALESCE(sum(resets), 0) FROM cohort)::float8 AS "resetsAfter",
            (SELECT COALESCE(sum(days), 0) FROM cohort)::float8 AS "loggerDaysAfter",
            (SELECT COALESCE(sum(resets), 0) FROM before)::float8 AS "resetsBefore",
            (SELECT COALESCE(sum(days), 0) FROM before)::float8 AS "loggerDaysBefore"`,
    {
      transaction: t,
      type: QueryTypes.SELECT,
      replacements: { id: release.id, version: release.version, now, retention: retentionDays, minHours: RESET_MIN_HOURS, countedResets: [...COUNTED_RESET_REASONS] },
    },
  );
  return {
    loggers: Number(row.loggers),
    resetsAfter: Number(row.resetsAfter),
    loggerDaysAfter: Number(row.loggerDaysAfter),
    resetsBefore: Number(row.resetsBefore),
    loggerDaysBefore: Number(row.loggerDaysBefore),
  };
}

export const tripPointsOf = (r: Pick<Release, 'tripFailureRatio' | 'tripMinReports' | 'tripResetFactor'>): TripPoints => ({
  tripFailureRatio: Number(r.tripFailureRatio),
  tripMinReports: Number(r.tripMinReports),
  tripResetFactor: Number(r.tripResetFactor),
});

type DayRow = {
  logger_id: string;
  site_id: string | null;
  /** 'before' or 'after' for a logger that confirmed the release, 'control' for one at its sites that did not. */
  side: 'before' | 'after' | 'control';
  day: string;
  energy_wh: number;
  clear_sky_wh: number;
  temp_excess_sum_c: number;
  temp_readings: number;
  probe_readings: number;
  probe_flagged: number;
};

/**
 * The measurement-drift rule's input (rollout/drift.ts): each logger that confirmed the release, with its
 * whole UTC days up to DRIFT_WINDOW_DAYS before its install day (any version) and after it (on the
 * release's version, days that are over); and the enrolled loggers at the same sites that did not
 * confirm it, over the same span, as controls. Read from logger_days, one row per logger, day and version.
 */
export async function driftInput(sequelize: Sequelize, t: Transaction | undefined, release: { id: string; version: string }, now: Date, retention: number): Promise<DriftInput> {
  const rows = await sequelize.query<DayRow>(
    `WITH treated AS (
       SELECT ir.logger_id, l.site_id, (ir.confirmed_at AT TIME ZONE 'UTC')::date AS installed_day
         FROM install_reports ir JOIN loggers l ON l.id = ir.logger_id
        WHERE ir.release_id = :id AND ir.confirmed_at IS NOT NULL AND ir.confirmed_at <= :now
          AND ir.confirmed_at >= CAST(:now AS timestamptz) - make_interval(days => :retention)
     ),
     today AS (SELECT (CAST(:now AS timestamptz) AT TIME ZONE 'UTC')::date AS day),
     controls AS (
       SELECT l.id AS logger_id, l.site_id FROM loggers l
        WHERE l.status = :enrolled AND l.site_id IN (SELECT site_id FROM treated)
          AND NOT EXISTS (SELECT 1 FROM install_reports ir WHERE ir.logger_id = l.id AND ir.release_id = :id AND ir.confirmed_at IS NOT NULL)
     ),
     sides AS (
       SELECT t.logger_id, t.site_id, CASE WHEN d.day < t.installed_day THEN 'before' ELSE 'after' END AS side, d.day, d.energy_wh, d.clear_sky_wh, d.temp_excess_sum_c, d.temp_readings, d.probe_readings, d.probe_flagged
         FROM treated t CROSS JOIN today JOIN logger_days d ON d.logger_id = t.logger_id
        WHERE (d.day BETWEEN t.installed_day - :window AND t.installed_day - 1)
           OR (d.day BETWEEN t.installed_day + 1 AND t.installed_day + :window AND d.day < today.day AND d.firmware = :version)
       UNION ALL
       SELECT c.logger_id, c.site_id, 'control', d.day, d.energy_wh, d.clear_sky_wh, d.temp_excess_sum_c, d.temp_readings, d.probe_readings, d.probe_flagged
         FROM controls c CROSS JOIN today JOIN logger_days d ON d.logger_id = c.logger_id
        WHERE d.day >= (SELECT min(installed_day) FROM treated) - :window AND d.day < today.day
     )
     SELECT logger_id, site_id, side, to_char(day, 'YYYY-MM-DD') AS day,
            sum(energy_wh)::float8 AS energy_wh, sum(clear_sky_wh)::float8 AS clear_sky_wh, sum(temp_excess_sum_c)::float8 AS temp_excess_sum_c,
            sum(temp_readings)::int AS temp_readings, sum(probe_readings)::int AS probe_readings, sum(probe_flagged)::int AS probe_flagged
       FROM sides GROUP BY logger_id, site_id, side, day ORDER BY logger_id, day`,
    {
      transaction: t,
      type: QueryTypes.SELECT,
      replacements: { enrolled: SQL_WORDS.enrolled, id: release.id, version: release.version, now, retention, window: DRIFT_WINDOW_DAYS },
    },
  );
  const installed = new Map<string, DriftInput['installed'][number]>();
  const controls = new Map<string, DriftInput['controls'][number]>();
  for (const r of rows) {
    const day: DriftDay = {
      day: r.day,
      energyWh: Number(r.energy_wh),
      clearSkyWh: Number(r.clear_sky_wh),
      tempExcessSumC: Number(r.temp_excess_sum_c),
      tempReadings: Number(r.temp_readings),
      probeReadings: Number(r.probe_readings),
      probeFlagged: Number(r.probe_flagged),
    };
    if (r.side === 'control') {
      const c = controls.get(r.logger_id) ?? { loggerId: r.logger_id, siteId: r.site_id, days: [] };
      c.days.push(day);
      controls.set(r.logger_id, c);
    } else {
      const l = installed.get(r.logger_id) ?? { loggerId: r.logger_id, siteId: r.site_id, before: [], after: [] };
      l[r.side].push(day);
      installed.set(r.logger_id, l);
    }
  }
  return { installed: [...installed.values()], controls: [...controls.values()] };
}

/**
 * The trip rules' verdict on a live release (the failure ratio first, then the reset rate, then — when
 * `drift` is asked, since it reads every day of the release's loggers — the measurement drift), read and
 * not acted on. Null for a release that is not live.
 */
export async function tripVerdict(
  sequelize: Sequelize,
  t: Transaction,
  release: Release,
  now: Date,
  options: { drift?: boolean } = {},
): Promise<TripVerdict | null> {
  if (!isLive(release.state)) return null;
  const points = tripPointsOf(release);
  let verdict = failureRatioVerdict(points, await failureFigures(sequelize, t, release.id));
  if (!verdict.trip) verdict = resetRateVerdict(points, await resetFigures(sequelize, t, release, now, retentionDays()));
  if (!verdict.trip && options.drift) {
    verdict = driftVerdict(driftTripPointsOf(release), driftFigures(await driftInput(sequelize, t, release, now, retentionDays())));
  }
  return verdict;
}

/**
 * Judges a live release locked in `t` by the trip rules (tripVerdict) and, when one trips, stops it
 * through the one writer of transitions. Returns the stopped release, or null when nothing tripped.
 */
export async function judgeTrip(
  sequelize: Sequelize,
  t: Transaction,
  release: Release,
  ctx: Omit<TransitionContext, 'trip'>,
  options: { drift?: boolean } = {},
): Promise<Release | null> {
  const verdict = await tripVerdict(sequelize, t, release, ctx.now, options);
  if (!verdict?.trip) return null;
  return applyTransition(t, release, { action: 'stop', reason: verdict.reason }, { ...ctx, trip: { rule: verdict.rule, figures: verdict.figures } });
}
