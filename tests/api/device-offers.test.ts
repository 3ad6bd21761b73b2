// An install report counts only for a release offered to that logger, or the one it runs; anything else
// is refused (409 problem+json, RFC 9457) and changes nothing: no install row, no trip count, no mail.
// And an image is served only to a logger it was offered to. Sources: DEVICE_API.md ("Install report",
// "Image download": "a download is allowed only for an image offered to that logger"; a pilot release
// is offered at its pilot sites only) and RFC 9110 §15.5.10 (409 Conflict: the request conflicts with
// the current state of the target resource).
import crypto from 'node:crypto';
import { QueryTypes } from 'sequelize';
import { bearer, CHECK_IN, checkInBody, fleetApp } from './device-fixtures';

const app = fleetApp();

const count = async (sql: string, replacements: Record<string, unknown>) =>
  (await app.t.sequelize.query<{ n: number }>(sql, { type: QueryTypes.SELECT, replacements }))[0].n;
const stateOf = async (id: string) =>
  (await app.t.sequelize.query<{ state: string }>('SELECT state FROM releases WHERE id = :id', { type: QueryTypes.SELECT, replacements: { id } }))[0].state;
const checkIn = (token: string, body: Record<string, unknown>) => app.t.request().post(CHECK_IN).set(bearer(token)).send(body);

describe('install reports for releases a logger was not offered', () => {
  test('when nine loggers at non-pilot sites report failed installs of a pilot release they were never offered, then each is 409 and nothing changes; the one failure at the pilot site trips it, with one mail', async () => {
    await app.t.signedIn('admin', 'Morgan Offers Admin');
    // Trip point: more than 5 % of at least 1 finished install, so one counted failure trips it.
    const pilot = await app.fleet.release({ version: '4.1.0', state: 'pilot', pilotSiteIds: [app.fleet.pilotSite.id], tripFailureRatio: 0.05, tripMinReports: 1 });
    const strays = await Promise.all(Array.from({ length: 9 }, () => app.fleet.logger()));
    for (const lg of strays) {
      // At a non-pilot site the pilot release is not offered (DEVICE_API.md rule 3).
      expect((await checkIn(lg.token, checkInBody('4.0.0'))).body.offer).toBeNull();
      const historyBefore = await count('SELECT count(*)::int AS n FROM check_ins WHERE logger_id = :id', { id: lg.id });
      const res = await checkIn(lg.token, checkInBody('4.0.0', { report: { release: pilot.id, state: 'failed', reason: 'storage', detail: 'flash write error' } }));
      expect(res.status).toBe(409);
      expect(res.headers['content-type']).toMatch(/^application\/problem\+json/);
      expect(res.body).toMatchObject({ status: 409, instance: CHECK_IN });
      expect(res.body.detail).toContain('not offered to this logger');
      // Nothing of the refused check-in was kept: no install row, not even its history row.
      expect(await count('SELECT count(*)::int AS n FROM check_ins WHERE logger_id = :id', { id: lg.id })).toBe(historyBefore);
      // The image was not offered to it either.
      expect((await app.t.request().get(`/api/device/v1/images/${pilot.sha256}`).set(bearer(lg.token))).status).toBe(404);
    }
    expect(await count('SELECT count(*)::int AS n FROM install_reports WHERE release_id = :id', { id: pilot.id })).toBe(0);
    expect(await stateOf(pilot.id)).toBe('pilot');
    expect(await count('SELECT count(*)::int AS n FROM release_transitions WHERE release_id = :id', { id: pilot.id })).toBe(0);

    // A logger at the pilot site is offered it, reports a failure, and that one counts: 1 of 1 failed.
    const onPilot = await app.fleet.logger({ siteId: app.fleet.pilotSite.id });
    expect((await checkIn(onPilot.token, checkInBody('4.0.0'))).body.offer?.release).toBe(pilot.id);
    const failed = await checkIn(onPilot.token, checkInBody('4.0.0', { report: { release: pilot.id, state: 'failed', reason: 'storage' } }));
    expect(failed.status).toBe(200);
    expect(await stateOf(pilot.id)).toBe('stopped');
    const [transition] = await app.t.sequelize.query<{ reason: string }>(`SELECT reason FROM release_transitions WHERE release_id = :id`, {
      type: QueryTypes.SELECT,
      replacements: { id: pilot.id },
    });
    expect(transition.reason).toContain('1 of 1 finished installs failed');

    // One mail for this release: the trip's, once it arrives; none came from the refused reports.
    const admin = await app.t.signedIn('admin', 'Morgan Offers Admin');
    const subject = `Release 4.1.0 of ${app.fleet.model.name} tripped: 100 % of installs failed (trip point 5 %)`;
    let mails: { subject: string }[] = [];
    while (mails.length === 0) {
      mails = ((await admin.get('/api/dev/outbox')).body as { subject: string }[]).filter((m) => m.subject.startsWith('Release 4.1.0 '));
      if (mails.length === 0) await new Promise((r) => setTimeout(r, 50));
    }
    expect(mails.map((m) => m.subject)).toEqual([subject]);
  });

  test('when a report names a release the server does not know, then 409 and nothing is recorded', async () => {
    const lg = await app.fleet.logger();
    const res = await checkIn(lg.token, checkInBody('2.3.1', { report: { release: crypto.randomUUID(), state: 'installed' } }));
    expect(res.status).toBe(409);
    expect(res.headers['content-type']).toMatch(/^application\/problem\+json/);
    expect(await count('SELECT count(*)::int AS n FROM check_ins WHERE logger_id = :id', { id: lg.id })).toBe(0);
    expect(await count('SELECT count(*)::int AS n FROM install_reports WHERE logger_id = :id', { id: lg.id })).toBe(0);
  });

  test('when a logger reports installed for the release it runs, never offered to it, then the report counts, but its image is still not served to it', async () => {
    const running = await app.fleet.release({ version: '5.2.0', boards: ['C'] });
    const lg = await app.fleet.logger({ board: 'C' });
    // It runs 5.2.0 already (flashed on the bench): nothing newer to offer.
    const res = await checkIn(lg.token, checkInBody('5.2.0', { board: 'C', report: { release: running.id, state: 'installed' } }));
    expect(res.status).toBe(200);
    expect(res.body.offer).toBeNull();
    const [row] = await app.t.sequelize.query<{ state: string; offered_at: Date | null; confirmed_at: Date | null }>(
      'SELECT state, offered_at, confirmed_at FROM install_reports WHERE logger_id = :loggerId AND release_id = :releaseId',
      { type: QueryTypes.SELECT, replacements: { loggerId: lg.id, releaseId: running.id } },
    );
    expect(row.state).toBe('installed');
    expect(row.confirmed_at).not.toBeNull();
    expect(row.offered_at).toBeNull();
    const img = `/api/device/v1/images/${running.sha256}`;
    expect((await app.t.request().get(img).set(bearer(lg.token))).status).toBe(404);
    expect((await app.t.request().head(img).set(bearer(lg.token))).status).toBe(404);
  });

  test('when an offered logger reports on the offer, then 200 and its image is served to it', async () => {
    const offered = await app.fleet.release({ version: '6.3.0', boards: ['A'] });
    const lg = await app.fleet.logger({ board: 'A' });
    expect((await checkIn(lg.token, checkInBody('6.2.0', { board: 'A' }))).body.offer?.release).toBe(offered.id);
    expect((await checkIn(lg.token, checkInBody('6.2.0', { board: 'A', report: { release: offered.id, state: 'downloading' } }))).status).toBe(200);
    expect((await app.t.request().head(`/api/device/v1/images/${offered.sha256}`).set(bearer(lg.token))).status).toBe(200);
  });
});
