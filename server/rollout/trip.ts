// The trip rules: a live release whose installs go wrong stops by itself (it *trips*). Pure: no I/O;
// the figures are read by server/releases/trip.ts, which judges them here and stops the release through
// the one writer of release transitions (server/releases/transitions.ts). The release dashboard shows
// the same rules as gauges (`tripGauges`), so what it shows is what the rule decides.
//
// Choices where the contract is silent (also in the OpenAPI document):
// - Failure ratio: failed ÷ finished, where finished = installed + failed for a reason that is not
//   transient (connection and low_supply are not counted on either side). It trips when the ratio is
//   above tripFailureRatio (strictly) over at least tripMinReports finished installs.
// - When it is judged: after every finished report and confirmation (with the release locked), and
//   at a check-in that brings watchdog or brown-out resets from a logger that confirmed a live release
//   it runs — at most once a minute per release and process, so a fleet of resetting boards does not
//   queue on the release row.
// - Reset rate: the loggers that confirmed the release and have checked in on it over at least 24 h
//   since (at least 20 of them) are compared with themselves: watchdog and brown-out resets per
//   logger-day on the new version (check-ins since each logger's confirmation) against the same per
//   logger-day on older versions in the retention window before it. It trips when the new rate is above
//   tripResetFactor × the old rate. A fleet with no resets at all before would trip on the first one, so
//   the old rate counts as at least one reset per 100 logger-days (a rule of thumb of ours, common
//   practice for such floors). Without at least 20 logger-days of history before the release (confirmed
//   longer ago than the retention window, or loggers new to the fleet) there is nothing to compare, and
//   the rate is not judged.
import type { TripFigures } from '../../schemas/releases';
import type { DriftTripPoint, TripRule } from '../../schemas/words';
import { DRIFT_FIGURES, driftFigureWords } from './drift';

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

export type TripPoints = { tripFailureRatio: number; tripMinReports: number; tripResetFactor: number } & Partial<Record<DriftTripPoint, number>>;

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
  | {
      trip: true;
      rule: TripRule;
      /** The sentence the transition and the activity log keep. */
      reason: string;
      /** The figures that tripped it, kept on the stopped release (trip_figures). */
      figures: TripFigures;
    };

/** A ratio of two non-negative figures, kept as numerator and denominator. */
type Fraction = { num: number; den: number };

/**
 * A trip point as an exact fraction of whole numbers, from the shortest decimal that prints it
 * (1.2 → 12/10, 0.05 → 5/100): the trip points are decimals people type, and a binary float of 1.2
 * is not exactly 1.2.
 */
export function decimalFraction(x: number): Fraction {
  const text = String(x);
  const m = /^(\d+)(?:\.(\d+))?$/.exec(text);
  if (!m) return { num: x, den: 1 }; // exponent form: far outside the trip points' ranges
  const decimals = m[2] ?? '';
  return { num: Number(m[1] + decimals), den: 10 ** decimals.length };
}

/**
 * Whether a/b > c/d, compared by cross-multiplying (a·d > c·b, for positive b and d), never by dividing:
 * with whole-number figures the products are exact below 2^53, so a rate exactly at its trip point
 * (1/20 a logger-day against 1.2 × 1/24) is at it, not a rounding error above it.
 */
export function fractionAbove(a: Fraction, b: Fraction): boolean {
  return a.num * b.den > b.num * a.den;
}

const times = (f: Fraction, g: Fraction): Fraction => ({ num: f.num * g.num, den: f.den * g.den });
const RESET_FLOOR_FRACTION = decimalFraction(RESET_RATE_FLOOR);

/** The rate before as judged: the measured rate, or the floor when the measured one is below it. */
function beforeJudged(r: ResetFigures): Fraction {
  const measured = { num: r.resetsBefore, den: r.loggerDaysBefore };
  return r.loggerDaysBefore > 0 && !fractionAbove(RESET_FLOOR_FRACTION, measured) ? measured : RESET_FLOOR_FRACTION;
}

const pct = (x: number) => `${Number((x * 100).toFixed(1))} %`;
const rate = (x: number) => Number(x.toFixed(3)).toString();

export function failureRatioVerdict(t: TripPoints, f: FailureFigures): TripVerdict {
  const finished = f.installed + f.failed;
  if (finished < t.tripMinReports || finished === 0) return { trip: false };
  const ratio = f.failed / finished;
  // Strictly above the trip point, compared exactly (failed × den > num × finished).
  if (!fractionAbove({ num: f.failed, den: finished }, decimalFraction(t.tripFailureRatio))) return { trip: false };
  return {
    trip: true,
    rule: 'failure_ratio',
    reason: `Trip: ${f.failed} of ${finished} finished installs failed (${pct(ratio)}), above the trip point of ${pct(t.tripFailureRatio)} over at least ${t.tripMinReports} installs.`,
    figures: { rule: 'failure_ratio', installed: f.installed, failed: f.failed, finished, ratio, tripPoint: t.tripFailureRatio, minReports: t.tripMinReports },
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
  // after > factor × before, compared exactly by cross-multiplying the figures and the decimal factor.
  if (!fractionAbove({ num: r.resetsAfter, den: r.loggerDaysAfter }, times(decimalFraction(t.tripResetFactor), beforeJudged(r)))) return { trip: false };
  return {
    trip: true,
    rule: 'reset_rate',
    figures: { rule: 'reset_rate', ...r, after, before, factor: after / before, tripPoint: t.tripResetFactor },
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

/**
 * The trip in one line, for the e-mail's subject and the release page: "6 % of installs failed (trip
 * point 5 %)", or "watchdog and brown-out resets rose to 3.1 × the rate before
 * (trip point 2 ×)".
 */
export function tripHeadline(f: TripFigures): string {
  if (f.rule === 'failure_ratio') return `${pct(f.ratio)} of installs failed (trip point ${pct(f.tripPoint)})`;
  if (f.rule === 'measurement_drift') {
    const shifts = { energy: f.energyShift, temperature: f.tempShiftC, flagged: f.flaggedShift };
    const tripped = DRIFT_FIGURES.filter((n) => f.tripped.includes(n) && shifts[n] !== null);
    return `measurements drifted after the install: ${tripped.map((n) => driftFigureWords(n, shifts[n]!)).join(', ')}`;
  }
  return `watchdog and brown-out resets rose to ${Number(f.factor.toFixed(1))} × the rate before (trip point ${f.tripPoint} ×)`;
}

export function evaluateTrips(t: TripPoints, f: FailureFigures, r: ResetFigures | null): TripVerdict {
  const byFailures = failureRatioVerdict(t, f);
  if (byFailures.trip) return byFailures;
  return r ? resetRateVerdict(t, r) : { trip: false };
}
