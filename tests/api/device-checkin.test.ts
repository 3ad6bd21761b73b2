// POST /api/device/v1/check-in: authentication, validation, latest state, history and config
// (DEVICE_API.md is the source of every status and field checked here).
import { QueryTypes } from 'sequelize';
import { bearer, CHECK_IN, checkInBody, createFleet, fleetApp } from './device-fixtures';
import { Logger, LoggerModel } from '../../server/db/models';

const app = fleetApp();


describe('check-in', () => {
  test('when an enrolled logger checks in without config_version, then it gets the time, a jittered interval and its measurement profile', async () => {
    const lg = await app.fleet.logger();
    const body = checkInBody('2.3.1');
    delete (body as Record<string, unknown>).config_version;
    const res = await app.t.request().post(CHECK_IN).set(bearer(lg.token)).send(body);
    expect(res.status).toBe(200);
    expect(res.body.server_time).toMatch(/^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}Z$/);
    // DEVICE_API.md: the model interval (900 s) jittered ±10 %; an idle test server does not stretch it.
    expect(res.body.next_check_in_s).toBeGreaterThanOrEqual(810);
    expect(res.body.next_check_in_s).toBeLessThanOrEqual(990 * 4);
    // The fixture's profile: INA226 data sheet SBOS547 Table 1 (2 mΩ, 1 mA/bit, CAL A00h = 2560, 25 mW/bit), 12-bit probe.
    expect(res.body.config).toEqual({
      version: 1,
      shunt_ohm: 0.002,
      max_current_a: 32.768,
      current_lsb_a: 0.001,
      calibration: 2560,
      power_lsb_w: 0.025,
      bus_v_max: 36,
      temp_resolution_bits: 12,
      sample_interval_s: 3,
    });
    expect(res.body.offer).toBeNull();
  });

  test('when the logger already runs the current profile version, then config is null', async () => {
    const lg = await app.fleet.logger();
    const res = await app.t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('2.3.1', { config_version: 1 }));
    expect(res.status).toBe(200);
    expect(res.body.config).toBeNull();
  });

  test('when a logger checks in, then its row holds the latest state and one history row is appended with the resets by reason', async () => {
    const lg = await app.fleet.logger();
    const res = await app.t
      .request()
      .post(CHECK_IN)
      .set(bearer(lg.token))
      .send(checkInBody('2.3.1', { reset_reason: 'brownout', resets_since_last: 2, supply_v: 4.9, rssi_dbm: -80, some_future_field: { x: 1 } }));
    expect(res.status).toBe(200);
    const row = await Logger.findByPk(lg.id);
    expect(row?.firmware).toBe('2.3.1');
    expect(Number(row?.supplyV)).toBeCloseTo(4.9, 6);
    expect(row?.lastSeenAt).not.toBeNull();
    const [state] = await app.t.sequelize.query<Record<string, unknown>>(
      'SELECT reported_board, security_counter, rssi_dbm, last_ip, last_reset_reason, readings FROM loggers WHERE id = :id',
      { type: QueryTypes.SELECT, replacements: { id: lg.id } },
    );
    expect(state).toMatchObject({ reported_board: 'B', security_counter: 1, rssi_dbm: -80, last_reset_reason: 'brownout' });
    expect(String(state.last_ip)).toMatch(/127\.0\.0\.1|::1/);
    expect(state.readings).toEqual({ bus_v: 18.4, current_a: 2.1, power_w: 38.6, energy_wh: 122.5, temp_c: 24.5 });
    const history = await app.t.sequelize.query<{ resets: unknown; firmware: string }>('SELECT firmware, resets FROM check_ins WHERE logger_id = :id', {
      type: QueryTypes.SELECT,
      replacements: { id: lg.id },
    });
    // DEVICE_API.md: without reset_counts, resets_since_last is counted under reset_reason.
    expect(history).toEqual([{ firmware: '2.3.1', resets: { brownout: 2 } }]);
  });

  test('when reset_counts is sent, then the history keeps the counts by reason and ignores unknown reasons', async () => {
    const lg = await app.fleet.logger();
    await app.t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('2.3.1', { reset_counts: { watchdog: 2, brownout: 1, cosmic_ray: 9 } })).expect(200);
    const [h] = await app.t.sequelize.query<{ resets: unknown }>('SELECT resets FROM check_ins WHERE logger_id = :id', { type: QueryTypes.SELECT, replacements: { id: lg.id } });
    expect(h.resets).toEqual({ watchdog: 2, brownout: 1 });
  });
});

describe('check-in errors', () => {
  test('when the token is missing, unknown, malformed or the logger is retired, then 401 problem+json', async () => {
    const retired = await app.fleet.logger({ status: 'retired' });
    const cases: Record<string, string>[] = [
      {},
      bearer('hlt_' + 'A'.repeat(43)),
      bearer('not-a-token'),
      bearer(retired.token),
      { Authorization: 'Basic Zm9vOmJhcg==' },
    ];
    for (const headers of cases) {
      const res = await app.t.request().post(CHECK_IN).set(headers).send(checkInBody('2.3.1'));
      expect(res.status).toBe(401);
      expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
      expect(res.body).toMatchObject({ status: 401, title: expect.any(String), detail: expect.any(String), type: expect.any(String) });
    }
  });

  test('when fields have wrong types or are out of range, then 400 names each field', async () => {
    const lg = await app.fleet.logger();
    const cases: [Record<string, unknown>, string][] = [
      // semver.org 2.0.0: no leading v, no leading zeros, no spaces.
      [{ firmware: 'v2.4.0' }, 'firmware'],
      [{ firmware: '2.04.0' }, 'firmware'],
      [{ firmware: '2.4.0 ' }, 'firmware'],
      [{ security_counter: -1 }, 'security_counter'],
      [{ security_counter: 1.5 }, 'security_counter'],
      [{ rssi_dbm: -121 }, 'rssi_dbm'],
      [{ rssi_dbm: 1 }, 'rssi_dbm'],
      [{ supply_v: 60.1 }, 'supply_v'],
      [{ supply_v: '5.1' }, 'supply_v'],
      [{ reset_reason: 'meteor' }, 'reset_reason'],
      [{ readings: { bus_v: 'high' } }, 'readings.bus_v'],
      [{ report: { release: '00000000-0000-4000-8000-000000000000', state: 'done' } }, 'report.state'],
      [{ report: { release: '00000000-0000-4000-8000-000000000000', state: 'failed', detail: 'x'.repeat(201) } }, 'report.detail'],
      [{ report: { release: 'ABC', state: 'installed' } }, 'report.release'],
      // Bounds of what the database keeps (PostgreSQL manual §8.1.1: integer up to 2147483647; bigint far
      // beyond 2^53 − 1 = 9007199254740991, the largest integer a JSON number carries exactly, I-JSON RFC 7493 §2.2).
      [{ security_counter: 2 ** 53 }, 'security_counter'],
      [{ config_version: 2 ** 31 }, 'config_version'],
      [{ resets_since_last: 2 ** 31 }, 'resets_since_last'],
      [{ reset_counts: { watchdog: 2 ** 31 } }, 'reset_counts.watchdog'],
      [{ uptime_s: 2 ** 53 }, 'uptime_s'],
      // semver.org 2.0.0 admits any run of digits; Heliodor compares numbers up to 2^53 − 1.
      [{ firmware: '12345678901234567890.0.0' }, 'firmware'],
    ];
    for (const [patch, field] of cases) {
      const res = await app.t.request().post(CHECK_IN).set(bearer(lg.token)).send({ ...checkInBody('2.3.1'), ...patch });
      expect(res.status).toBe(400);
      expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
      expect(res.body.errors.map((e: { path: string }) => e.path)).toContain(field);
    }
    const missing = await app.t.request().post(CHECK_IN).set(bearer(lg.token)).send({});
    expect(missing.status).toBe(400);
    expect(missing.body.errors.map((e: { path: string }) => e.path).sort()).toEqual(['board', 'firmware', 'security_counter']);
  });

  test('when counters reach the largest values the columns hold, then 200 and they are kept exactly', async () => {
    const lg = await app.fleet.logger();
    // A time-based security counter (RFC 9124 allows one, docs/SOURCES.md §5) in milliseconds passes 2^31 − 1.
    for (const securityCounter of [2 ** 31, Number.MAX_SAFE_INTEGER]) {
      const body = checkInBody('2.3.1', {
        security_counter: securityCounter,
        config_version: 2 ** 31 - 1,
        // Both counted reasons at 2^31 − 1: their sum, 2^32 − 2, is past an integer.
        reset_counts: { watchdog: 2 ** 31 - 1, brownout: 2 ** 31 - 1 },
        reset_reason: 'watchdog',
      });
      const res = await app.t.request().post(CHECK_IN).set(bearer(lg.token)).send(body);
      expect(res.status).toBe(200);
      const [row] = await app.t.sequelize.query<{ security_counter: number; config_version: number }>(
        'SELECT security_counter, config_version FROM loggers WHERE id = :id',
        { type: QueryTypes.SELECT, replacements: { id: lg.id } },
      );
      expect(row).toEqual({ security_counter: securityCounter, config_version: 2 ** 31 - 1 });
      const [history] = await app.t.sequelize.query<{ security_counter: string }>(
        'SELECT security_counter::text FROM check_ins WHERE logger_id = :id ORDER BY at DESC LIMIT 1',
        { type: QueryTypes.SELECT, replacements: { id: lg.id } },
      );
      expect(history.security_counter).toBe(String(securityCounter));
    }
  });

  test('when the body is not JSON, then 400; when it is over 16 KiB, then 413', async () => {
    const lg = await app.fleet.logger();
    const bad = await app.t.request().post(CHECK_IN).set(bearer(lg.token)).set('Content-Type', 'application/json').send('{"firmware": ');
    expect(bad.status).toBe(400);
    const big = { ...checkInBody('2.3.1'), padding: 'x'.repeat(16 * 1024) };
    const res = await app.t.request().post(CHECK_IN).set(bearer(lg.token)).send(big);
    expect(res.status).toBe(413);
    expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
  });
});

describe('the supply guard', () => {
  test('when a logger reports 3.2995 V against a 3.3 V minimum, then it is not offered the update, though its row keeps 3.300 V', async () => {
    // DEVICE_API.md rule 5: the guard blocks when the supply reported in this check-in is below the model's
    // minimum. The row keeps millivolts (numeric(6,3)), which rounds 3.2995 to 3.300 (PostgreSQL manual
    // §8.1.2: numeric rounds ties away from zero); the guard must not see the rounded value.
    const fleet = await createFleet(app.t);
    await LoggerModel.update({ minUpdateSupplyV: 3.3 }, { where: { id: fleet.model.id } });
    const release = await fleet.release({ version: '9.1.0' });
    const lg = await fleet.logger();
    const low = await app.t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('9.0.0', { supply_v: 3.2995 }));
    expect(low.status).toBe(200);
    expect(low.body.offer).toBeNull();
    const [row] = await app.t.sequelize.query<{ supply_v: string }>('SELECT supply_v::text FROM loggers WHERE id = :id', { type: QueryTypes.SELECT, replacements: { id: lg.id } });
    expect(row.supply_v).toBe('3.300');
    // Exactly at the minimum is not below it.
    const at = await app.t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('9.0.0', { supply_v: 3.3 }));
    expect(at.body.offer?.release).toBe(release.id);
  });
});
