// A release stopped by a person and one stopped by the trip rule leave the same rows (PRODUCT.md:
// "stop, trip (the automatic stop)"; journey 4, "A bad release trips by itself … and e-mails the admins
// and release engineers"): one writer of transitions records both, only who and why differ.
import { QueryTypes } from 'sequelize';
import { csrf } from '../helpers/app';
import { bearer, CHECK_IN, checkInBody, fleetApp } from './device-fixtures';

const app = fleetApp();

type ReleaseColumns = {
  state: string;
  resume_state: string | null;
  share: number;
  stopped_at: Date | null;
  stopped_by: string | null;
  trip_figures: Record<string, unknown> | null;
};

async function releaseRow(id: string) {
  const [row] = await app.t.sequelize.query<ReleaseColumns>('SELECT state, resume_state, share::float8 AS share, stopped_at, stopped_by, trip_figures FROM releases WHERE id = :id', {
    type: QueryTypes.SELECT,
    replacements: { id },
  });
  return row;
}

async function stopRows(id: string) {
  const transitions = await app.t.sequelize.query<Record<string, unknown>>(
    `SELECT action, from_state, to_state, share::float8 AS share, reason, actor_type, actor_name FROM release_transitions WHERE release_id = :id AND action = 'stop' ORDER BY id`,
    { type: QueryTypes.SELECT, replacements: { id } },
  );
  const activity = await app.t.sequelize.query<{ action: string; actor_type: string; target_type: string; summary: string; details: Record<string, unknown> }>(
    `SELECT action, actor_type, target_type, summary, details FROM activity WHERE target_id = :id AND action LIKE 'release.%' AND details ? 'by' ORDER BY id`,
    { type: QueryTypes.SELECT, replacements: { id } },
  );
  return { transitions, activity };
}

async function mailsWith(subject: (s: string) => boolean) {
  const admin = await app.t.signedIn('admin', 'Morgan Stops Admin');
  return ((await admin.get('/api/dev/outbox')).body as { to: string[]; subject: string }[]).filter((m) => subject(m.subject));
}

test('when one release is stopped by a person and another trips, then both leave the same rows, told apart only by who stopped them and why', async () => {
  await app.t.signedIn('admin', 'Morgan Stops Admin');
  const priya = await app.t.signedIn('release_engineer', 'Priya Stops Engineer');
  // Two complete releases of the fleet's model for different boards, so each logger is offered one of them.
  const byPerson = await app.fleet.release({ version: '5.0.0', boards: ['A'] });
  const byTrip = await app.fleet.release({ version: '4.0.0', boards: ['B'], tripFailureRatio: 0.05, tripMinReports: 1 });

  const stopped = await priya.post(`/api/releases/${byPerson.id}/transitions`).set(csrf).send({ action: 'stop', reason: 'brown-outs at the pump house' });
  expect(stopped.status).toBe(200);
  expect(stopped.body).toMatchObject({ state: 'stopped', stoppedBy: 'person', tripFigures: null });

  const lg = await app.fleet.logger({ board: 'B' });
  const offered = await app.t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('3.9.0'));
  expect(offered.body.offer?.release).toBe(byTrip.id);
  // One failed install of one finished: 100 % failed, above the trip point of 5 % over at least 1 install.
  const failed = await app.t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('3.9.0', { report: { release: byTrip.id, state: 'failed', reason: 'integrity' } }));
  expect(failed.status).toBe(200);
  expect(failed.body.offer).toBeNull();

  // The release rows: the same columns, both stopped from complete at 100 %, each with who stopped it.
  const person = await releaseRow(byPerson.id);
  const trip = await releaseRow(byTrip.id);
  expect(person).toMatchObject({ state: 'stopped', resume_state: 'complete', share: 100, stopped_by: 'person', trip_figures: null });
  expect(trip).toMatchObject({ state: 'stopped', resume_state: 'complete', share: 100, stopped_by: 'trip' });
  expect(person.stopped_at).toBeInstanceOf(Date);
  expect(trip.stopped_at).toBeInstanceOf(Date);
  expect(trip.trip_figures).toEqual({ rule: 'failure_ratio', installed: 0, failed: 1, finished: 1, ratio: 1, tripPoint: 0.05, minReports: 1 });

  // The transitions rows: one stop each, the same columns; the trip's actor is the system.
  const p = await stopRows(byPerson.id);
  const t = await stopRows(byTrip.id);
  expect(p.transitions).toEqual([
    { action: 'stop', from_state: 'complete', to_state: 'stopped', share: 100, reason: 'brown-outs at the pump house', actor_type: 'person', actor_name: 'Priya Stops Engineer' },
  ]);
  expect(t.transitions).toEqual([
    { action: 'stop', from_state: 'complete', to_state: 'stopped', share: 100, reason: expect.stringContaining('1 of 1 finished installs failed (100 %)'), actor_type: 'system', actor_name: 'system' },
  ]);

  // The activity rows: one event code whoever stopped it, the same details, `by` telling them apart.
  expect(p.activity).toHaveLength(1);
  expect(t.activity).toHaveLength(1);
  const [pa] = p.activity;
  const [ta] = t.activity;
  expect([pa.action, ta.action]).toEqual(['release.stopped', 'release.stopped']);
  expect([pa.target_type, ta.target_type]).toEqual(['release', 'release']);
  expect(Object.keys(ta.details).sort()).toEqual(Object.keys(pa.details).sort());
  expect(pa.details).toEqual({ fromState: 'complete', toState: 'stopped', share: 100, reason: 'brown-outs at the pump house', by: 'person', rule: null, figures: null });
  expect(ta.details).toMatchObject({ fromState: 'complete', toState: 'stopped', share: 100, by: 'trip', rule: 'failure_ratio', figures: trip.trip_figures });
  expect(ta.summary).toBe(`${app.fleet.model.name} 4.0.0 tripped: 100 % of installs failed (trip point 5 %)`);

  // The release answer says which it was, so the page can say "Tripped" or "Stopped by Priya".
  const answer = (await priya.get(`/api/releases/${byTrip.id}`)).body;
  expect(answer).toMatchObject({ state: 'stopped', stoppedBy: 'trip', tripFigures: trip.trip_figures });
  expect(answer.history.at(-1)).toMatchObject({ action: 'stop', actorName: 'system' });

  // The mail rule: the trip mails the admins and release engineers once it has committed; the person's stop mails nobody.
  const subject = `Release 4.0.0 of ${app.fleet.model.name} tripped: 100 % of installs failed (trip point 5 %)`;
  let tripMails: { to: string[]; subject: string }[] = [];
  for (let i = 0; i < 50 && tripMails.length === 0; i++) {
    tripMails = await mailsWith((s) => s === subject);
    if (tripMails.length === 0) await new Promise((r) => setTimeout(r, 100));
  }
  expect(tripMails).toHaveLength(1);
  expect(tripMails[0].to).toEqual(expect.arrayContaining(['morgan.stops.admin@test.example', 'priya.stops.engineer@test.example']));
  expect(await mailsWith((s) => s.includes('5.0.0'))).toEqual([]);
});

test('when a stopped release is resumed and stopped again, then who stopped it is cleared on resume and the first stop keeps its time', async () => {
  const priya = await app.t.signedIn('release_engineer', 'Priya Stops Engineer');
  const release = await app.fleet.release({ version: '6.0.0', boards: ['C'], tripFailureRatio: 0.05, tripMinReports: 1 });
  const lg = await app.fleet.logger({ board: 'C' });
  await app.t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('5.9.0', { board: 'C' })).expect(200);
  await app.t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('5.9.0', { board: 'C', report: { release: release.id, state: 'failed', reason: 'storage' } })).expect(200);
  const tripped = await releaseRow(release.id);
  expect(tripped.stopped_by).toBe('trip');

  const resumed = await priya.post(`/api/releases/${release.id}/transitions`).set(csrf).send({ action: 'resume', reason: 'flash wear understood; image rebuilt' });
  expect(resumed.body).toMatchObject({ state: 'complete', stoppedBy: null, tripFigures: null });
  expect(await releaseRow(release.id)).toMatchObject({ state: 'complete', stopped_by: null, trip_figures: null, stopped_at: tripped.stopped_at });

  const again = await priya.post(`/api/releases/${release.id}/transitions`).set(csrf).send({ action: 'stop', reason: 'one more look' });
  expect(again.body).toMatchObject({ state: 'stopped', stoppedBy: 'person', tripFigures: null });
  // stopped_at is the first time the release was stopped (set once, like piloted_at, widened_at and completed_at).
  expect((await releaseRow(release.id)).stopped_at).toEqual(tripped.stopped_at);
});
