// The trip rules at work: the figures they judge, read from install reports and the check-in history,
// and the stop when one of them trips (rules and verdicts: rollout/trip.ts). The release dashboard reads
// the same figures for its gauges, so it shows what the rule decides.
//
// Called inside a check-in's transaction with the release row locked (SELECT … FOR UPDATE, taken before
// the report was applied), so concurrent check-ins serialise on the release: exactly one of them stops
// it, and every report is counted.
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import type { Release } from '../db/models';
import { retentionDays } from '../db/retention';
import { isLive } from '../rollout/lifecycle';
import { failureRatioVerdict, RESET_MIN_HOURS, resetRateVerdict, type FailureFigures, type ResetFigures, type TripPoints } from '../rollout/trip';
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

/**
 * Judges a live release locked in `t` by the trip rules (the failure ratio first, then the reset rate)
 * and, when one trips, stops it through the one writer of transitions. Returns the stopped release, or
 * null when nothing tripped.
 */
export async function judgeTrip(
  sequelize: Sequelize,
  t: Transaction,
  release: Release,
  ctx: Omit<TransitionContext, 'trip'>,
): Promise<Release | null> {
  if (!isLive(release.state)) return null;
  const points = tripPointsOf(release);
  let verdict = failureRatioVerdict(points, await failureFigures(sequelize, t, release.id));
  if (!verdict.trip) verdict = resetRateVerdict(points, await resetFigures(sequelize, t, release, ctx.now, retentionDays()));
  if (!verdict.trip) return null;
  return applyTransition(t, release, { action: 'stop', reason: verdict.reason }, { ...ctx, trip: { rule: verdict.rule, figures: verdict.figures } });
}
