// Trip by measurement drift (server/rollout/drift.ts): loggers check in through the device API with the
// readings the fleet simulator's panels give (scripts/simulator/readings.ts, the reference client's
// meter) under the same sky; 20 of them install a release that halves the current they measure, 4 others
// at the same site are not offered it (another board) and stay as controls. After one whole day on the
// release the next check-in trips it: one transition by the system, one activity row, one e-mail.
// The clock is injected so that days pass. The clear-sky model is docs/SOURCES.md §21.
import { QueryTypes } from 'sequelize';
import { PanelMeter, typicalPanel } from '../../scripts/simulator/readings';
import { seededRandom } from '../../scripts/simulator/random';
import { bearer, CHECK_IN, checkInBody, fleetApp } from './device-fixtures';

const HOUR = 3_600_000;
const D1 = Date.UTC(2026, 5, 8); // 8 June 2026: a long day in the Vale
let clock = new Date(D1);
const app = fleetApp({ now: () => clock });

type Virtual = { id: string; token: string; board: string; meter: PanelMeter; firmware: string };

test('when 20 loggers report half the current after installing a release, then after a whole day on it the release trips on measurement drift, with one e-mail and one activity row', async () => {
  await app.t.signedIn('admin', 'Morgan Drift Admin'); // the admin the trip e-mail goes to
  const release = await app.fleet.release({ version: '2.0.0', boards: ['B'], tripMinReports: 1000 });
  const spot = { latitude: 52.1412, longitude: -1.9821 }; // the fixture site, Aldmere Village Hall
  const random = seededRandom(7);
  const virtual = async (board: string): Promise<Virtual> => {
    const lg = await app.fleet.logger({ board });
    // The same fixed cloud for everyone: the weather the site shares.
    const meter = new PanelMeter({ panel: typicalPanel(50), spot, random, at: new Date(D1 - HOUR), clearness: 0.7 });
    return { ...lg, board, meter, firmware: '1.0.0' };
  };
  const installing = await Promise.all(Array.from({ length: 20 }, () => virtual('B')));
  const controls = await Promise.all(Array.from({ length: 4 }, () => virtual('A')));
  const everyone = [...installing, ...controls];

  const send = (v: Virtual, extra: Record<string, unknown> = {}) => {
    v.meter.advance(clock, true);
    const readings = v.meter.readings(null);
    return app.t.request().post(CHECK_IN).set(bearer(v.token))
      .send(checkInBody(v.firmware, { board: v.board, uptime_s: Math.floor((clock.getTime() - D1 + 2 * HOUR) / 1000), readings, ...extra }));
  };
  const stateOf = async () =>
    (await app.t.sequelize.query<{ state: string; stopped_by: string | null; trip_figures: Record<string, unknown> | null }>(
      'SELECT state, stopped_by, trip_figures FROM releases WHERE id = :id', { type: QueryTypes.SELECT, replacements: { id: release.id } },
    ))[0];
  /** A day of check-ins every four hours from 02:00 to 22:00 UTC (the whole daylight of June in the Vale). */
  const day = async (start: number, onFirst?: () => Promise<void>) => {
    for (let h = 2; h <= 22; h += 4) {
      clock = new Date(start + h * HOUR);
      if (h === 2 && onFirst) await onFirst();
      for (const v of everyone) await send(v).expect(200);
    }
  };

  // Day 1 on 1.0.0: the before side. The controls are never offered the release (board A).
  await day(D1);
  // Day 2: the install at 02:00 (offered, installed, rebooted into 2.0.0 and confirmed a minute later),
  // and from then on the release's broken measurement code halves the current.
  await day(D1 + 24 * HOUR, async () => {
    for (const v of installing) {
      expect((await send(v)).body.offer?.release).toBe(release.id);
      await send(v, { report: { release: release.id, state: 'installed' } }).expect(200);
    }
    clock = new Date(clock.getTime() + 60_000);
    for (const v of installing) {
      v.firmware = '2.0.0';
      v.meter.currentScale = 0.5;
      await send(v).expect(200);
    }
    for (const v of controls) expect((await send(v)).body.offer).toBeNull();
  });
  // Day 3 on the release. Until it is over there is no whole day after the install: nothing trips.
  await day(D1 + 48 * HOUR);
  expect((await stateOf()).state).toBe('complete');

  // Day 4, 02:00: the first check-in on the release judges the whole of day 3 against day 1.
  clock = new Date(D1 + 72 * HOUR + 2 * HOUR);
  await send(installing[0]).expect(200);
  const stopped = await stateOf();
  expect(stopped).toMatchObject({ state: 'stopped', stopped_by: 'trip' });
  expect(stopped.trip_figures).toMatchObject({ rule: 'measurement_drift', tripped: ['energy'], energyLoggers: 20, controls: 4, tripPoints: { tripDriftEnergy: 0.1, tripDriftTempC: 3, tripDriftFlagged: 0.02 } });
  // Half the current, half the power and energy: −50 % against the clear sky, within the readings' rounding.
  expect(Number(stopped.trip_figures!.energyShift)).toBeCloseTo(-0.5, 2);
  // The probe and its flags did not move.
  expect(Math.abs(Number(stopped.trip_figures!.tempShiftC))).toBeLessThan(0.5);
  expect(stopped.trip_figures!.flaggedShift).toBe(0);

  const transitions = await app.t.sequelize.query<{ actor_type: string; reason: string }>(
    `SELECT actor_type, reason FROM release_transitions WHERE release_id = :id AND action = 'stop'`,
    { type: QueryTypes.SELECT, replacements: { id: release.id } },
  );
  expect(transitions).toHaveLength(1);
  expect(transitions[0].actor_type).toBe('system');
  expect(transitions[0].reason).toMatch(/daily energy against the clear-sky model −50 % \(median of 20 loggers, trip point 10 %\)/);
  const activity = await app.t.sequelize.query<{ actor_type: string; summary: string; details: { by: string; rule: string } }>(
    `SELECT actor_type, summary, details FROM activity WHERE action = 'release.stopped' AND target_id = :id`,
    { type: QueryTypes.SELECT, replacements: { id: release.id } },
  );
  expect(activity).toHaveLength(1);
  expect(activity[0]).toMatchObject({ actor_type: 'system', details: { by: 'trip', rule: 'measurement_drift' } });

  const admin = await app.t.signedIn('admin', 'Morgan Drift Admin'); // signed in again at the injected clock
  const subject = `Release 2.0.0 of ${app.fleet.model.name} tripped: measurements drifted after the install: daily energy against the clear-sky model −50 %`;
  let mails: { to: string[]; subject: string; text: string }[] = [];
  for (let i = 0; i < 50 && mails.length === 0; i++) {
    mails = ((await admin.get('/api/dev/outbox')).body as typeof mails).filter((m) => m.subject === subject);
    if (mails.length === 0) await new Promise((r) => setTimeout(r, 100));
  }
  expect(mails).toHaveLength(1);
  expect(mails[0].to).toContain('morgan.drift.admin@test.example');
  expect(mails[0].text).toContain('energy against the clear-sky model −50 % over 20 loggers');

  // The dashboard's drift gauge reads the same rule: over, on energy.
  const dashboard = await admin.get(`/api/releases/${release.id}/dashboard`).expect(200);
  expect(dashboard.body.trip.drift).toMatchObject({ over: true, minLoggers: 20, controls: 4, energy: { loggers: 20, judged: true, over: true, threshold: 0.1 } });
});
