// Install report order, rollback detection, trip points and load manners: the pure parts of the
// device API service. Orders and figures come from DEVICE_API.md ("States only move forward"),
// the product's trip points (PRODUCT.md journey 4), and semantic-version precedence as the semver package (npm) computes it.
import semver from 'semver';
import { afterInstalled, applyReport, isFinished, type StoredReport } from '../../server/rollout/reports';
import { evaluateTrips, failureRatioVerdict, tripGauges, resetRateVerdict } from '../../server/rollout/trip';
import { busyness, nextCheckInSeconds, stretchFor } from '../../server/device-api/load';
import { dayOfPartition, partitionName, retentionDays, utcDay } from '../../server/device-api/partitions';

const at = new Date('2026-12-01T10:00:00Z');
const row = (state: StoredReport['state'], reason: string | null = null, retriedAt: Date | null = null): StoredReport => ({ state, reason, updatedAt: at, retriedAt });

describe('install report order', () => {
  const order = ['downloading', 'downloaded', 'installing', 'installed'] as const;
  test.each(order.flatMap((from, i) => order.map((to, j) => [from, to, j > i] as const)))('when the row is %s and %s is reported, then applied is %s', (from, to, applied) => {
    expect(applyReport(row(from), to).apply).toBe(applied);
  });

  test('when there is no row yet, then any state is applied as a new attempt', () => {
    expect(applyReport(null, 'installing')).toEqual({ apply: true, state: 'installing', reason: null, newAttempt: true });
  });

  test('when failed comes without a reason, then it is recorded as other', () => {
    expect(applyReport(row('downloading'), 'failed')).toEqual({ apply: true, state: 'failed', reason: 'other', newAttempt: false });
  });

  test('when a reason comes with a state other than failed, then it is dropped', () => {
    expect(applyReport(row('offered'), 'downloading', 'storage')).toMatchObject({ apply: true, reason: null });
  });

  test('when the last failure was transient, then a new attempt may start; when permanent, then reports wait for a retry', () => {
    expect(applyReport(row('failed', 'connection'), 'downloading')).toMatchObject({ apply: true, newAttempt: true });
    expect(applyReport(row('failed', 'low_supply'), 'installed')).toMatchObject({ apply: true });
    expect(applyReport(row('failed', 'signature'), 'downloading')).toEqual({ apply: false, why: 'failed_awaiting_retry' });
    expect(applyReport(row('failed', 'signature', new Date(at.getTime() + 1000)), 'downloading')).toMatchObject({ apply: true, newAttempt: true });
  });

  test('when failed is reported twice for one attempt, then the second is ignored', () => {
    expect(applyReport(row('failed', 'connection'), 'failed', 'connection')).toEqual({ apply: false, why: 'repeated' });
  });

  test('when the row is installed, then nothing but a retry changes it', () => {
    expect(applyReport(row('installed'), 'failed', 'other')).toEqual({ apply: false, why: 'after_install' });
    expect(applyReport(row('installed'), 'installed')).toEqual({ apply: false, why: 'repeated' });
  });

  test('finished installs are installed and non-transient failures', () => {
    expect([isFinished('installed', null), isFinished('failed', 'integrity'), isFinished('failed', null), isFinished('failed', 'connection'), isFinished('failed', 'low_supply'), isFinished('installing', null)]).toEqual([
      true,
      true,
      true,
      false,
      false,
      false,
    ]);
  });
});

describe('confirmation and rollback', () => {
  test.each([
    ['2.4.0', '2.4.0', false, 'confirmed'],
    ['2.5.0', '2.4.0', false, 'confirmed'],
    ['2.3.1', '2.4.0', true, 'pending'],
    ['2.3.1', '2.4.0', false, 'rolled_back'],
    // semver.org §11: 2.4.0-rc.1 < 2.4.0, so a logger still on the release candidate has rolled back.
    ['2.4.0-rc.1', '2.4.0', false, 'rolled_back'],
  ] as const)('when a logger that reported installed runs %s after installing %s (reported in this check-in: %s), then %s', (running, version, now, expected) => {
    expect(semver.gte(running, version)).toBe(expected === 'confirmed');
    expect(afterInstalled(running, version, now)).toBe(expected);
  });
});

describe('trip points', () => {
  const release = { tripFailureRatio: 0.05, tripMinReports: 20, tripResetFactor: 2 };
  test('when fewer than the minimum installs finished, then no stop whatever the ratio', () => {
    expect(failureRatioVerdict(release, { installed: 0, failed: 19 }).trip).toBe(false);
  });
  test('when the ratio equals the threshold, then no stop; above it, then stop with the figures', () => {
    expect(failureRatioVerdict(release, { installed: 19, failed: 1 }).trip).toBe(false); // 1/20 = 5 %
    const v = failureRatioVerdict(release, { installed: 19, failed: 2 }); // 2/21 = 9.52 %
    expect(v).toMatchObject({ trip: true, rule: 'failure_ratio' });
    expect(v.trip && v.reason).toContain('2 of 21 finished installs failed (9.5 %)');
  });
  const resets = { loggers: 20, resetsAfter: 0, loggerDaysAfter: 20, resetsBefore: 10, loggerDaysBefore: 100 };
  test('when fewer than 20 loggers confirmed a day ago, then the reset rate is not judged', () => {
    expect(resetRateVerdict(release, { ...resets, loggers: 19, resetsAfter: 1000 }).trip).toBe(false);
  });
  test('when the reset rate is exactly twice the rate before, then no stop; above twice, then stop', () => {
    // before: 10 resets / 100 logger-days = 0.1 a day; after: 4 / 20 = 0.2 (= 2 ×), 5 / 20 = 0.25 (> 2 ×).
    expect(resetRateVerdict(release, { ...resets, resetsAfter: 4 }).trip).toBe(false);
    expect(resetRateVerdict(release, { ...resets, resetsAfter: 5 })).toMatchObject({ trip: true, rule: 'reset_rate' });
  });
  test('when there were no resets before, then the floor of one per 100 logger-days is the rate before', () => {
    // floor 0.01 a day × factor 2 × 20 logger-days = 0.4 resets: 1 reset crosses it, 0 does not.
    expect(resetRateVerdict(release, { ...resets, resetsBefore: 0, resetsAfter: 0 }).trip).toBe(false);
    expect(resetRateVerdict(release, { ...resets, resetsBefore: 0, resetsAfter: 1 }).trip).toBe(true);
  });
  test('when the dashboard reads the gauges, then they show the figures the verdicts judge, and agree with them at and around each threshold', () => {
    // 1 of 20 finished = 5 % of 5 %: judged, not over (the threshold is "above", strictly).
    expect(tripGauges(release, { installed: 19, failed: 1 }, resets).failureRatio).toMatchObject({ finished: 20, ratio: 0.05, judged: true, over: false });
    // before 0.1 a day; after 4 / 20 = 0.2 a day, factor 2 of 2.
    expect(tripGauges(release, { installed: 0, failed: 0 }, { ...resets, resetsAfter: 4 }).resetRate).toMatchObject({ after: 0.2, before: 0.1, factor: 2, judged: true, over: false });
    // No resets before: judged against the floor (0.01 a day), the measured rate still shows 0.
    expect(tripGauges(release, { installed: 0, failed: 0 }, { ...resets, resetsBefore: 0, resetsAfter: 1 }).resetRate).toMatchObject({ before: 0, beforeJudged: 0.01, over: true });
    for (const failed of [0, 1, 2, 19, 20]) {
      for (const installed of [0, 1, 18, 19, 40]) {
        const f = { installed, failed };
        expect(tripGauges(release, f, resets).failureRatio.over).toBe(failureRatioVerdict(release, f).trip);
      }
    }
    for (const loggers of [19, 20]) {
      for (const resetsAfter of [0, 3, 4, 5, 50]) {
        for (const [resetsBefore, loggerDaysBefore] of [[0, 100], [10, 100], [0, 0], [2, 19], [2, 20]]) {
          const r = { ...resets, loggers, resetsAfter, resetsBefore, loggerDaysBefore };
          expect(tripGauges(release, { installed: 0, failed: 0 }, r).resetRate.over).toBe(resetRateVerdict(release, r).trip);
        }
      }
    }
  });
  test('when the check-ins kept hold less than 20 logger-days before the release, then the reset rate is not judged, however many resets', () => {
    // A release confirmed longer ago than the retention window has no rate before to compare with.
    expect(resetRateVerdict(release, { ...resets, resetsBefore: 0, loggerDaysBefore: 0, resetsAfter: 500 }).trip).toBe(false);
    expect(resetRateVerdict(release, { ...resets, resetsBefore: 0, loggerDaysBefore: 19.9, resetsAfter: 500 }).trip).toBe(false);
    expect(resetRateVerdict(release, { ...resets, resetsBefore: 0, loggerDaysBefore: 20, resetsAfter: 500 }).trip).toBe(true);
    expect(tripGauges(release, { installed: 0, failed: 0 }, { ...resets, loggerDaysBefore: 0, resetsAfter: 500 }).resetRate).toMatchObject({ judged: false, over: false, minLoggerDaysBefore: 20 });
  });
  test('when the reset rate is exactly the factor 1.2 × the rate before (1/20 against 1/24 a logger-day), then no stop; just above it, then stop', () => {
    // Exact arithmetic (our worked figures): 1.2 × 1/24 = 12/240 = 1/20, so 1 reset over 20 logger-days is
    // at the trip point, not above it. In binary floating point 1.2 × (1/24) is 0.049999999999999996 (IEEE 754
    // doubles, as Node computes them), just below 1/20 = 0.05, which a division-based comparison reads as above.
    expect(1.2 * (1 / 24)).toBeLessThan(1 / 20);
    const points = { ...release, tripResetFactor: 1.2 };
    const atPoint = { loggers: 20, resetsAfter: 1, loggerDaysAfter: 20, resetsBefore: 1, loggerDaysBefore: 24 };
    expect(resetRateVerdict(points, atPoint).trip).toBe(false);
    expect(tripGauges(points, { installed: 0, failed: 0 }, atPoint).resetRate.over).toBe(false);
    // The same rate scaled up (50 over 1000 logger-days), still exactly at the point.
    expect(resetRateVerdict(points, { ...atPoint, resetsAfter: 50, loggerDaysAfter: 1000 }).trip).toBe(false);
    // Just above: 1001 resets over 20 000 logger-days = 0.05005 a day > 0.05.
    expect(resetRateVerdict(points, { ...atPoint, resetsAfter: 1001, loggerDaysAfter: 20_000 })).toMatchObject({ trip: true, rule: 'reset_rate' });
    expect(tripGauges(points, { installed: 0, failed: 0 }, { ...atPoint, resetsAfter: 1001, loggerDaysAfter: 20_000 }).resetRate.over).toBe(true);
  });

  test('when the floor is the rate before and the rate after is exactly the factor times it, then no stop; one more reset, then stop', () => {
    // Floor 1 per 100 logger-days (our rule); factor 1.1: 1.1 × 0.01 × 1000 logger-days = 11 resets exactly.
    // In floating point 1.1 × 0.01 is 0.011000000000000001, so 11/1000 = 0.011 would read as below it.
    const points = { ...release, tripResetFactor: 1.1 };
    const figures = { loggers: 20, resetsAfter: 11, loggerDaysAfter: 1000, resetsBefore: 0, loggerDaysBefore: 100 };
    expect(resetRateVerdict(points, figures).trip).toBe(false);
    expect(resetRateVerdict(points, { ...figures, resetsAfter: 12 }).trip).toBe(true);
    // A measured rate exactly at the floor (1 per 100) is the floor.
    expect(resetRateVerdict(points, { ...figures, resetsBefore: 1 }).trip).toBe(false);
  });

  test('when the failure ratio is exactly a trip point that is not a binary fraction (3 of 10 against 0.3), then no stop; 4 of 13, then stop', () => {
    // 3/10 and 0.3 are the same decimal; 0.1 + 0.2 = 0.30000000000000004 shows that sums of such decimals drift in binary.
    const points = { ...release, tripFailureRatio: 0.3, tripMinReports: 10 };
    expect(failureRatioVerdict(points, { installed: 7, failed: 3 }).trip).toBe(false);
    expect(failureRatioVerdict(points, { installed: 9, failed: 4 }).trip).toBe(true); // 4/13 = 30.8 %
  });

  test('the failure ratio is judged first', () => {
    expect(evaluateTrips(release, { installed: 0, failed: 20 }, { ...resets, resetsAfter: 100 })).toMatchObject({ rule: 'failure_ratio' });
  });
});

describe('load manners', () => {
  test('when random is 0, ½ and just below 1, then the interval is −10 %, exact and +10 % (uniform jitter)', () => {
    expect(nextCheckInSeconds(900, 0)).toBe(810);
    expect(nextCheckInSeconds(900, 0.5)).toBe(900);
    expect(nextCheckInSeconds(900, 0.999999)).toBe(990);
  });
  test('when the server is busy, then the interval stretches, at most four times', () => {
    expect(nextCheckInSeconds(900, 0.5, stretchFor(1))).toBe(3600);
    expect(nextCheckInSeconds(900, 0.5, 10)).toBe(3600);
    expect(stretchFor(0)).toBe(1);
    expect(busyness({ eventLoopDelayMs: 10, poolWaiting: 0, poolMax: 20, inFlight: 0, maxInFlight: 200 })).toBe(0);
    expect(busyness({ eventLoopDelayMs: 120, poolWaiting: 0, poolMax: 20, inFlight: 0, maxInFlight: 200 })).toBeCloseTo(0.5, 10);
    expect(busyness({ eventLoopDelayMs: 0, poolWaiting: 20, poolMax: 20, inFlight: 0, maxInFlight: 200 })).toBe(1);
    expect(busyness({ eventLoopDelayMs: 0, poolWaiting: 0, poolMax: 20, inFlight: 50, maxInFlight: 200 })).toBe(0.25);
  });
});

describe('check-in history partitions', () => {
  test('partition names follow the UTC day and read back', () => {
    const day = utcDay(new Date('2026-12-01T23:59:59.999Z'));
    expect(day.toISOString()).toBe('2026-12-01T00:00:00.000Z');
    expect(partitionName(day)).toBe('check_ins_p20261201');
    expect(dayOfPartition('check_ins_p20261201')?.toISOString()).toBe('2026-12-01T00:00:00.000Z');
    expect(dayOfPartition('check_ins_default')).toBeNull();
  });
  test('the retention window defaults to 30 days and reads HELIODOR_CHECKIN_RETENTION_DAYS', () => {
    expect(retentionDays({})).toBe(30);
    expect(retentionDays({ HELIODOR_CHECKIN_RETENTION_DAYS: '7' })).toBe(7);
    expect(retentionDays({ HELIODOR_CHECKIN_RETENTION_DAYS: 'zero' })).toBe(30);
  });
});
