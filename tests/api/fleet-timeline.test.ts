// Notes on loggers and sites and the logger timeline (§6): one list, newest first, paged
// by cursor; sparklines of supply and probe temperature.
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { Activity } from '../../server/db/models';
import { createFleet, type Fleet } from './device-fixtures';
import { addCheckIn, hoursBefore, setReported } from './fleet-fixtures';

let clock = new Date('2026-06-21T12:00:00Z');
let t: TestApp;
let fleet: Fleet;
let loggerId: string;
type Agent = Awaited<ReturnType<TestApp['signedIn']>>;
let support: Agent;

beforeAll(async () => {
  t = await startTestApp({ now: () => clock });
  fleet = await createFleet(t);
  const l = await fleet.logger();
  loggerId = l.id;
  await setReported(t, l.id, clock, { firmware: '2.1.4', lastSeenAgoS: 600, supplyV: 5.0, tempC: 22 });
  // Two days of check-ins every 3 h; the probe's power-on value once (DS18B20 data sheet: +85 °C).
  for (let h = 48; h >= 3; h -= 3) {
    await addCheckIn(t, l.id, hoursBefore(clock, h), { firmware: '2.1.4', supplyV: 4.8 + (h % 6) / 10, tempC: h === 24 ? 85 : 15 + (h % 9), resets: h === 12 ? { brownout: 1 } : undefined, resetReason: h === 12 ? 'brownout' : undefined });
  }
  const release = await fleet.release({ version: '2.3.0', state: 'complete' });
  await t.sequelize.query(
    `INSERT INTO install_reports (logger_id, release_id, state, reason, offered_at, updated_at) VALUES (:l, :r, 'failed', 'storage', :a, :b)`,
    { replacements: { l: l.id, r: release.id, a: hoursBefore(clock, 7), b: hoursBefore(clock, 5) } },
  );
  await Activity.create({ actorType: 'person', actorId: null, actorName: 'Ade Integrator', action: 'logger.enrolled', targetType: 'logger', targetId: l.id, summary: 'Logger enrolled at Aldmere Village Hall', requestId: null, details: null, at: hoursBefore(clock, 50) });
  support = await t.signedIn('support', 'Lena Support');
});
afterAll(() => t.close());

describe('notes', () => {
  test('when support adds a note to a logger and a site, then 201 with the note, and an activity row each', async () => {
    const res = await support.post(`/api/loggers/${loggerId}/notes`).set(csrf).send({ text: '  Customer reports the panel was shaded by scaffolding this week.  ' });
    expect(res.status).toBe(201);
    expect(res.body).toMatchObject({ targetType: 'logger', targetId: loggerId, text: 'Customer reports the panel was shaded by scaffolding this week.', authorName: 'Lena Support', createdAt: clock.toISOString() });
    const site = await support.post(`/api/sites/${fleet.site.id}/notes`).set(csrf).send({ text: 'Key for the hut is at the village shop.' });
    expect(site.status).toBe(201);
    expect(await Activity.count({ where: { action: 'logger.note_added', targetId: loggerId } })).toBe(1);
    expect(await Activity.count({ where: { action: 'site.note_added', targetId: fleet.site.id } })).toBe(1);
  });

  test('when the text is empty or longer than 1000 characters, or the role may not write notes, then it is refused', async () => {
    expect((await support.post(`/api/loggers/${loggerId}/notes`).set(csrf).send({ text: '   ' })).status).toBe(400);
    const long = await support.post(`/api/loggers/${loggerId}/notes`).set(csrf).send({ text: 'x'.repeat(1001) });
    expect(long.status).toBe(400);
    expect(long.body.errors[0].path).toBe('text');
    expect((await support.post(`/api/loggers/${loggerId}/notes`).set(csrf).send({ text: 'x'.repeat(1000) })).status).toBe(201);
    const integrator = await t.signedIn('integrator', 'Ade Integrator');
    expect((await integrator.post(`/api/loggers/${loggerId}/notes`).set(csrf).send({ text: 'hello' })).status).toBe(403);
    expect((await support.post('/api/sites/00000000-0000-4000-8000-000000000000/notes').set(csrf).send({ text: 'hello' })).status).toBe(404);
  });
});

type Item = { kind: string; at: string; [k: string]: unknown };

describe('timeline', () => {
  test('when support pages through the timeline, then every item comes once, newest first, and the pages add up to the total', async () => {
    clock = new Date(clock.getTime() + 60_000);
    await support.post(`/api/loggers/${loggerId}/notes`).set(csrf).send({ text: 'Visited; fuse replaced.' });
    const items: Item[] = [];
    let cursor: string | undefined;
    let total = 0;
    let pages = 0;
    do {
      const res = await support.get(`/api/loggers/${loggerId}/timeline`).query({ limit: 4, ...(cursor ? { cursor } : {}) });
      expect(res.status).toBe(200);
      expect(res.body.rows.length).toBeLessThanOrEqual(4);
      items.push(...res.body.rows);
      total = res.body.total;
      cursor = res.body.nextCursor;
      pages++;
    } while (cursor && pages < 50);
    expect(items).toHaveLength(total);
    const times = items.map((i) => Date.parse(i.at));
    expect(times).toEqual([...times].sort((x, y) => y - x));
    // 16 check-ins, 1 reset, 1 install report, 1 enrollment, 3 notes.
    const count = (kind: string) => items.filter((i) => i.kind === kind).length;
    expect([count('check_in'), count('reset'), count('install'), count('activity'), count('note')]).toEqual([16, 1, 1, 1, 3]);
    expect(items[0]).toMatchObject({ kind: 'note', text: 'Visited; fuse replaced.' });
    expect(items.find((i) => i.kind === 'reset')).toMatchObject({ reason: 'brownout', counts: { brownout: 1 } });
    expect(items.find((i) => i.kind === 'install')).toMatchObject({ version: '2.3.0', state: 'failed', reason: 'storage' });
    expect(items[items.length - 1]).toMatchObject({ kind: 'activity', action: 'logger.enrolled' });
  });

  test('when the cursor is not one the timeline gave, then 400', async () => {
    const res = await support.get(`/api/loggers/${loggerId}/timeline`).query({ cursor: 'not-a-cursor' });
    expect(res.status).toBe(400);
    expect(res.body.errors[0].path).toBe('cursor');
  });
});

describe('sparklines', () => {
  test('when support asks for 7 days, then hourly points carry supply and temperature, the probe power-on value left out', async () => {
    const res = await support.get(`/api/loggers/${loggerId}/sparklines`).query({ days: 7 });
    expect(res.status).toBe(200);
    expect(res.body.points).toHaveLength(16);
    const at24 = res.body.points.find((p: { hour: string }) => p.hour === hoursBefore(clock, 24).toISOString().slice(0, 13) + ':00:00.000Z');
    expect(at24.tempC).toBeNull();
    expect(res.body.points.every((p: { supplyV: number }) => p.supplyV >= 4.8 && p.supplyV <= 5.3)).toBe(true);
    expect((await support.get(`/api/loggers/${loggerId}/sparklines`).query({ days: 31 })).status).toBe(400);
  });
});
