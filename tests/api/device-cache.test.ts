// The releases cache of the device API (DEVELOPERS.md: cached per process, invalidated through
// PostgreSQL LISTEN/NOTIFY; the rule: "A transition takes effect at the very next check-in served by
// the same process").
import { csrf } from '../helpers/app';
import { bearer, CHECK_IN, checkInBody, fleetApp } from './device-fixtures';
import { createDatabase } from '../../server/db';
import { createReleaseCache } from '../../server/device-api/release-cache';

const app = fleetApp();


test('when a release engineer pauses a release, then the very next check-in served by this process gets no offer, and after resume it gets it again', async () => {
  const release = await app.fleet.release({ version: '2.4.0' });
  const lg = await app.fleet.logger();
  const checkIn = () => app.t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('2.3.1'));
  expect((await checkIn()).body.offer?.release).toBe(release.id); // the cache now holds the release
  const engineer = await app.t.signedIn('release_engineer');
  const paused = await engineer.post(`/api/releases/${release.id}/transitions`).set(csrf).send({ action: 'pause' });
  expect(paused.status).toBe(200);
  expect((await checkIn()).body.offer).toBeNull();
  const resumed = await engineer.post(`/api/releases/${release.id}/transitions`).set(csrf).send({ action: 'resume' });
  expect(resumed.status).toBe(200);
  expect((await checkIn()).body.offer?.release).toBe(release.id);
});

test('when another process changes a release, then this process drops its cached copy on the notification, long before any time-to-live', async () => {
  const release = await app.fleet.release({ version: '3.0.0', boards: ['C'] });
  const c = app.t.sequelize.config;
  const other = createDatabase(`postgres://${encodeURIComponent(c.username)}:${encodeURIComponent(c.password ?? '')}@${c.host}:${c.port}/${c.database}`, { poolMax: 2 });
  const cache = createReleaseCache(other, { ttlMs: 3_600_000 });
  try {
    for (let i = 0; i < 100 && !cache.listening(); i++) await new Promise((r) => setTimeout(r, 20));
    expect(cache.listening()).toBe(true);
    const before = await cache.get(app.fleet.model.id);
    expect(before.find((r) => r.id === release.id)?.state).toBe('complete');
    // Plain SQL on the test's own connection: no model hooks, only the trigger's NOTIFY reaches the cache.
    await app.t.sequelize.query(`UPDATE releases SET state = 'paused', resume_state = 'complete' WHERE id = :id`, { replacements: { id: release.id } });
    let state: string | undefined = 'complete';
    for (let i = 0; i < 100 && state === 'complete'; i++) {
      state = (await cache.get(app.fleet.model.id)).find((r) => r.id === release.id)?.state;
      if (state === 'complete') await new Promise((r) => setTimeout(r, 20));
    }
    expect(state).toBe('paused');
  } finally {
    await cache.stop();
    await other.close();
  }
});
