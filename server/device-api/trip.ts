// Trip (issue 5 §5): after each install report, the release's thresholds are evaluated and
// a release that crosses one is stopped by the system. The evaluation is pure (`evaluateTrips`); the
// service (`tripIfCrossed`) reads the figures and stops inside the report's transaction, with the
// release row locked (SELECT … FOR UPDATE, taken by the caller before the report is applied), so
// concurrent check-ins serialise on the release: exactly one of them stops, and every report is counted.
//
// Choices where the issue is silent (also in the OpenAPI document):
// - Failure ratio: failed ÷ finished, where finished = installed + failed for a reason that is not
//   transient (connection and low_supply are not counted on either side). It stops when the ratio is
//   above tripFailureRatio (strictly) over at least tripMinReports finished installs.
// - When it is evaluated: after every finished report and confirmation (with the release locked), and
//   at a check-in that brings watchdog or brown-out resets from a logger that confirmed a live release
//   it runs — at most once a minute per release and process, so a fleet of resetting boards does not
//   queue on the release row.
// - Reset rate: the loggers that confirmed the release and have checked in on it over at least 24 h
//   since (at least 20 of them) are compared with themselves: watchdog and brown-out resets per logger-day on the new version (check-ins
//   since each logger's confirmation) against the same per logger-day on older versions in the
//   retention window before it. It stops when the new rate is above tripResetFactor × the old rate. A
//   fleet with no resets at all before would stop on the first one, so the old rate counts as at least
//   one reset per 100 logger-days (a rule of thumb of ours, common practice for such floors). Without
//   at least 20 logger-days of history before the release (confirmed longer ago than the retention
//   window, or loggers new to the fleet) there is nothing to compare, and the rate is not judged.
import type { Sequelize, Transaction } from 'sequelize';
import { QueryTypes } from 'sequelize';
import { transition, type ReleaseLifecycle, type ReleaseState, type ResumeState } from '../releases/lifecycle';
import { recordActivity } from '../activity/service';
import { systemContext } from '../auth/actor';
import type { Mail } from '../mail/mailer';

export const RESET_MIN_LOGGERS = 20;
/**
 * History needed before the release, in logger-days, to compare with: without it (a release older than
 * the check-in history kept, or loggers new to the fleet) there is no rate before, and a floor alone
 * would stop a healthy fleet whose boards reset now and then. As many logger-days as the cohort minimum.
 */
export const RESET_MIN_LOGGER_DAYS_BEFORE = RESET_MIN_LOGGERS;
export const RESET_MIN_HOURS = 24;
/** Floor of the old reset rate, resets per logger-day. */
export const RESET_RATE_FLOOR = 0.01;

export type TripPoints = { tripFailureRatio: number; tripMinReports: number; tripResetFactor: number };

export type FailureFigures = { installed: number; failed: number };

export type ResetFigures = {
  loggers: number;
  resetsAfter: number;
  loggerDaysAfter: number;
  resetsBefore: number;
  loggerDaysBefore: number;
};

export type TripVerdict =
  | { trip: false }
  | { trip: true; rule: 'failure_ratio' | 'reset_rate'; reason: string };

const pct = (x: number) => `${Number((x * 100).toFixed(1))} %`;
const rate = (x: number) => Number(x.toFixed(3)).toString();

export function failureRatioVerdict(t: TripPoints, f: FailureFigures): TripVerdict {
  const finished = f.installed + f.failed;
  if (finished < t.tripMinReports || finished === 0) return { trip: false };
  const ratio = f.failed / finished;
  if (ratio <= t.tripFailureRatio) return { trip: false };
  return {
    trip: true,
    rule: 'failure_ratio',
    reason: `Trip: ${f.failed} of ${finished} finished installs failed (${pct(ratio)}), above the trip point of ${pct(t.tripFailureRatio)} over at least ${t.tripMinReports} installs.`,
  };
}

/** Enough loggers a day on the release, and enough history before it, to compare the two rates. */
export function resetRateJudged(r: ResetFigures): boolean {
  return r.loggers >= RESET_MIN_LOGGERS && r.loggerDaysAfter > 0 && r.loggerDaysBefore >= RESET_MIN_LOGGER_DAYS_BEFORE;
}

export function resetRateVerdict(t: TripPoints, r: ResetFigures): TripVerdict {
  if (!resetRateJudged(r)) return { trip: false };
  const after = r.resetsAfter / r.loggerDaysAfter;
  const measuredBefore = r.loggerDaysBefore > 0 ? r.resetsBefore / r.loggerDaysBefore : 0;
  const before = Math.max(measuredBefore, RESET_RATE_FLOOR);
  if (after <= t.tripResetFactor * before) return { trip: false };
  return {
    trip: true,
    rule: 'reset_rate',
    reason:
      `Trip: watchdog and brown-out resets rose to ${rate(after)} per logger-day on the new version ` +
      `(${r.resetsAfter} over ${rate(r.loggerDaysAfter)} logger-days, ${r.loggers} loggers) from ${rate(measuredBefore)} before it ` +
      `(${r.resetsBefore} over ${rate(r.loggerDaysBefore)} logger-days), more than ${t.tripResetFactor} × the rate before.`,
  };
}

/**
 * The trip points beside their current values, as the release dashboard shows them ("failure ratio
 * 1.8 % of 5 %"). `over` is exactly what the verdicts above decide, so the dashboard and the automatic
 * stop never disagree.
 */
export function tripGauges(t: TripPoints, f: FailureFigures, r: ResetFigures) {
  const finished = f.installed + f.failed;
  const measuredBefore = r.loggerDaysBefore > 0 ? r.resetsBefore / r.loggerDaysBefore : 0;
  const before = Math.max(measuredBefore, RESET_RATE_FLOOR);
  const after = r.loggerDaysAfter > 0 ? r.resetsAfter / r.loggerDaysAfter : 0;
  return {
    failureRatio: {
      ...f,
      finished,
      ratio: finished ? f.failed / finished : 0,
      threshold: t.tripFailureRatio,
      minReports: t.tripMinReports,
      judged: finished >= t.tripMinReports && finished > 0,
      over: failureRatioVerdict(t, f).trip,
    },
    resetRate: {
      ...r,
      minLoggers: RESET_MIN_LOGGERS,
      minLoggerDaysBefore: RESET_MIN_LOGGER_DAYS_BEFORE,
      minHours: RESET_MIN_HOURS,
      /** Resets per logger-day on the new version, and before it (measured, and as judged with the floor). */
      after,
      before: measuredBefore,
      beforeJudged: before,
      /** The new rate as a multiple of the old one (with the floor), against tripResetFactor. */
      factor: after / before,
      threshold: t.tripResetFactor,
      judged: resetRateJudged(r),
      over: resetRateVerdict(t, r).trip,
    },
  };
}
export type TripGauges = ReturnType<typeof tripGauges>;

export function evaluateTrips(t: TripPoints, f: FailureFigures, r: ResetFigures | null): TripVerdict {
  const byFailures = failureRatioVerdict(t, f);
  if (byFailures.trip) return byFailures;
  return r ? resetRateVerdict(t, r) : { trip: false };
}

// ─── Service ────────────────────────────────────────────────────────────────

/** The release row as locked by the report's transaction. */
export type LockedRelease = TripPoints & {
  id: string;
  modelId: string;
  version: string;
  state: ReleaseState;
  share: number;
  resumeState: ResumeState | null;
};

/** Locks the release row for this transaction; with skipLocked, gives up (null) when another transaction holds it. */
export async function lockRelease(sequelize: Sequelize, t: Transaction, releaseId: string, options: { skipLocked?: boolean } = {}): Promise<LockedRelease | null> {
  const rows = await sequelize.query<LockedRelease>(
    `SELECT id, model_id AS "modelId", version, state, share, resume_state AS "resumeState",
            trip_failure_ratio AS "tripFailureRatio", trip_min_reports AS "tripMinReports", trip_reset_factor AS "tripResetFactor"
       FROM releases WHERE id = :id FOR UPDATE${options.skipLocked ? ' SKIP LOCKED' : ''}`,
    { transaction: t, type: QueryTypes.SELECT, replacements: { id: releaseId } },
  );
  return rows[0] ?? null;
}

export async function failureFigures(sequelize: Sequelize, t: Transaction | undefined, releaseId: string): Promise<FailureFigures> {
  const [row] = await sequelize.query<{ installed: number; failed: number }>(
    `SELECT count(*) FILTER (WHERE state = 'installed')::int AS installed,
            count(*) FILTER (WHERE state = 'failed' AND COALESCE(reason, 'other') NOT IN ('connection', 'low_supply'))::int AS failed
       FROM install_reports WHERE release_id = :id`,
    { transaction: t, type: QueryTypes.SELECT, replacements: { id: releaseId } },
  );
  return { installed: Number(row?.installed ?? 0), failed: Number(row?.failed ?? 0) };
}

const RESETS = `(COALESCE((c.resets->>'watchdog')::int, 0) + COALESCE((c.resets->>'brownout')::int, 0))`;

export async function resetFigures(sequelize: Sequelize, t: Transaction | undefined, release: Pick<LockedRelease, 'id' | 'version'>, now: Date, retentionDays: number): Promise<ResetFigures> {
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
     cohort AS (SELECT * FROM after WHERE days * 24 >= ${RESET_MIN_HOURS}),
     before AS (
       SELECT k.logger_id, COALESCE(sum(${RESETS}), 0) AS resets,
              EXTRACT(EPOCH FROM (k.confirmed_at - COALESCE(min(c.at), k.confirmed_at))) / 86400 AS days
         FROM cohort k LEFT JOIN check_ins c ON c.logger_id = k.logger_id AND c.at < k.confirmed_at
              AND c.at >= k.confirmed_at - make_interval(days => :retention) AND c.firmware <> :version
        GROUP BY k.logger_id, k.confirmed_at
     )
     SELECT (SELECT count(*) FROM cohort)::int AS loggers,
            (SELECT COALESCE(sum(resets), 0) FROM cohort)::int AS "resetsAfter",
            (SELECT COALESCE(sum(days), 0) FROM cohort)::float8 AS "loggerDaysAfter",
            (SELECT COALESCE(sum(resets), 0) FROM before)::int AS "resetsBefore",
            (SELECT COALESCE(sum(days), 0) FROM before)::float8 AS "loggerDaysBefore"`,
    { transaction: t, type: QueryTypes.SELECT, replacements: { id: release.id, version: release.version, now, retention: retentionDays } },
  );
  return {
    loggers: Number(row.loggers),
    resetsAfter: Number(row.resetsAfter),
    loggerDaysAfter: Number(row.loggerDaysAfter),
    resetsBefore: Number(row.resetsBefore),
    loggerDaysBefore: Number(row.loggerDaysBefore),
  };
}

export type TripOutcome = { release: LockedRelease; reason: string; mail: Mail };

/**
 * Evaluates a live release locked in `t` and stops it when a threshold is crossed: the release row,
 * a release_transitions row and an activity row by the system, all in `t`. Returns the e-mail to send
 * once `t` has committed (never before: a rolled-back stop must not be announced), or null.
 */
export async function tripIfCrossed(
  sequelize: Sequelize,
  t: Transaction,
  release: LockedRelease,
  options: { now: Date; retentionDays: number; requestId: string | null },
): Promise<TripOutcome | null> {
  if (!['pilot', 'widening', 'complete'].includes(release.state)) return null;
  const failures = await failureFigures(sequelize, t, release.id);
  let verdict = failureRatioVerdict(release, failures);
  if (!verdict.trip) verdict = resetRateVerdict(release, await resetFigures(sequelize, t, release, options.now, options.retentionDays));
  if (!verdict.trip) return null;

  const lifecycle: ReleaseLifecycle = { state: release.state, share: release.share, resumeState: release.resumeState };
  const next = transition(lifecycle, 'stop', { reason: verdict.reason });
  if (!next.ok) return null;
  await sequelize.query(
    `UPDATE releases SET state = :state, share = :share, resume_state = :resumeState, stopped_at = :now, updated_at = :now WHERE id = :id`,
    { transaction: t, replacements: { ...next.release, now: options.now, id: release.id } },
  );
  await sequelize.query(
    `INSERT INTO release_transitions (release_id, at, action, from_state, to_state, share, reason, actor_type, actor_name)
     VALUES (:id, :now, 'stop', :from, :to, :share, :reason, 'system', 'system')`,
    { transaction: t, replacements: { id: release.id, now: options.now, from: release.state, to: next.release.state, share: next.release.share, reason: verdict.reason } },
  );
  const [model] = await sequelize.query<{ name: string }>('SELECT name FROM models WHERE id = :id', {
    transaction: t,
    type: QueryTypes.SELECT,
    replacements: { id: release.modelId },
  });
  const modelName = model?.name ?? 'the model';
  await recordActivity(t, systemContext(options.requestId), {
    action: 'release.stopped',
    targetType: 'release',
    targetId: release.id,
    summary: `Release ${release.version} of ${modelName} was tripped. ${verdict.reason}`,
    details: { by: 'trip', rule: verdict.rule, fromState: release.state, failures },
  });
  const recipients = await sequelize.query<{ email: string }>(
    `SELECT email FROM users WHERE role IN ('admin', 'release_engineer') AND disabled_at IS NULL ORDER BY email`,
    { transaction: t, type: QueryTypes.SELECT },
  );
  const text = [
    `Heliodor stopped release ${release.version} of ${modelName} automatically.`,
    '',
    verdict.reason,
    '',
    `Installs so far: ${failures.installed} installed, ${failures.failed} failed (transient failures not counted).`,
    'No logger is offered this release until it is resumed or withdrawn. Open the release in the console to decide.',
  ].join('\n');
  return {
    release: { ...release, state: next.release.state, share: next.release.share, resumeState: next.release.resumeState },
    reason: verdict.reason,
    mail: { to: recipients.map((r) => r.email), subject: `Release ${release.version} of ${modelName} tripped`, text },
  };
}
