// Trip by reset rate (the rule: "the watchdog/brown-out reset rate of loggers on the new
// version against the same loggers before it (default: more than double, over at least 20 loggers and
// 24 h)"), read from the check-in history. The clock is injected so that a day can pass.
import { QueryTypes } from 'sequelize';
import { bearer, CHECK_IN, checkInBody, fleetApp } from './device-fixtures';

const DAY = 86_400_000;
const T0 = new Date(Date.UTC(2026, 11, 1, 11, 0, 0));
let clock = T0;
const app = fleetApp({ now: () => clock });

const stateOf = async (id: string) =>
  (await app.t.sequelize.query<{ state: string }>('SELECT state FROM releases WHERE id = :id', { type: QueryTypes.SELECT, replacements: { id } }))[0].state;

test('when 20 loggers reset far more often on the new version than on the old one over a day, then the release stops at the 20th, not before', async () => {
  const release = await app.fleet.release({ version: '2.0.0', boards: ['A'], tripMinReports: 1000 });
  const loggers = await Promise.all(Array.from({ length: 20 }, () => app.fleet.logger({ board: 'A' })));
  // Ten days on 1.0.0 before the update, one brown-out per logger: 20 resets over 200 logger-days = 0.1 a day.
  await app.t.sequelize.query(
    `INSERT INTO check_ins (logger_id, at, firmware, board, security_counter, resets)
     SELECT l.id, CAST(:t0 AS timestamptz) - make_interval(days => d), '1.0.0', 'A', 1,
            CASE WHEN d = 5 THEN '{"brownout": 1}'::jsonb ELSE '{}'::jsonb END
       FROM unnest(CAST(:ids AS uuid[])) AS l(id), generate_series(1, 10) AS d`,
    { replacements: { t0: T0.toISOString(), ids: `{${loggers.map((l) => l.id).join(',')}}` } },
  );
  const send = (token: string, firmware: string, extra: Record<string, unknown> = {}) =>
    app.t.request().post(CHECK_IN).set(bearer(token)).send(checkInBody(firmware, { board: 'A', ...extra }));
  for (const lg of loggers) {
    expect((await send(lg.token, '1.0.0')).body.offer?.release).toBe(release.id);
    await send(lg.token, '1.0.0', { report: { release: release.id, state: 'installed' } }).expect(200);
  }
  clock = new Date(T0.getTime() + 60_000);
  for (const lg of loggers) await send(lg.token, '2.0.0').expect(200); // confirmed
  const confirmed = await app.t.sequelize.query<{ n: number }>('SELECT count(*)::int AS n FROM install_reports WHERE release_id = :id AND confirmed_at IS NOT NULL', {
    type: QueryTypes.SELECT,
    replacements: { id: release.id },
  });
  expect(confirmed[0].n).toBe(20);

  // 25 h later each logger comes back with one watchdog reset: ≈ 0.96 a day, far above 2 × 0.1.
  // Below 20 loggers observed over 24 h the rate is not judged.
  for (const [i, lg] of loggers.entries()) {
    clock = new Date(T0.getTime() + 25 * 3_600_000 + i * 61_000);
    await send(lg.token, '2.0.0', { reset_counts: { watchdog: 1 }, reset_reason: 'watchdog' }).expect(200);
    expect(await stateOf(release.id)).toBe(i < 19 ? 'complete' : 'stopped');
  }
  const [transition] = await app.t.sequelize.query<{ reason: string; actor_type: string }>(
    `SELECT reason, actor_type FROM release_transitions WHERE release_id = :id AND action = 'stop'`,
    { type: QueryTypes.SELECT, replacements: { id: release.id } },
  );
  expect(transition.actor_type).toBe('system');
  expect(transition.reason).toMatch(/watchdog and brown-out resets rose to 0\.9\d+ per logger-day .* 20 loggers\) from 0\.1 before it \(20 over 200\.0\d* logger-days\)/);
});

test('when a logger on a confirmed release reports the largest boot counts the contract allows, then the reset rate is judged without overflow (200)', async () => {
  // Each count may be up to 2^31 − 1 (the API's bound, DEVICE_API.md); two of them, and their sums over
  // the check-in history, pass a PostgreSQL integer (manual §8.1.1: at most 2147483647).
  const release = await app.fleet.release({ version: '3.0.0', boards: ['C'], tripMinReports: 1000 });
  const lg = await app.fleet.logger({ board: 'C' });
  const start = clock.getTime();
  const send = (firmware: string, extra: Record<string, unknown> = {}) =>
    app.t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody(firmware, { board: 'C', ...extra }));
  expect((await send('2.9.0')).body.offer?.release).toBe(release.id);
  await send('2.9.0', { report: { release: release.id, state: 'installed' } }).expect(200);
  clock = new Date(start + 60_000);
  await send('3.0.0').expect(200); // confirmed
  clock = new Date(start + 25 * 3_600_000);
  const res = await send('3.0.0', { reset_counts: { watchdog: 2 ** 31 - 1, brownout: 2 ** 31 - 1 }, reset_reason: 'watchdog' });
  expect(res.status).toBe(200);
  // One logger is below the 20 the rule needs: judged, and not tripped.
  expect(await stateOf(release.id)).toBe('complete');
});
