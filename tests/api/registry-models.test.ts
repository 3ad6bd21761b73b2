// Models and board revisions: CRUD, validation, roles, activity rows.
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { Activity } from '../../server/db/models';

let t: TestApp;
beforeAll(async () => {
  t = await startTestApp({ seed: 'demo' });
});
afterAll(() => t.close());

// Limits of the usual power-monitor chip: INA226 data sheet SBOS547 (docs/SOURCES.md §8): shunt full scale
// 81.92 mV, bus 0–36 V. Probe resolutions 9–12 bits: DS18B20 data sheet (docs/SOURCES.md §9).
const fl3 = {
  name: 'FL-3 field logger',
  boards: [
    { label: 'A', note: 'First run' },
    { label: 'B', note: 'Bulk capacitors on the supply' },
  ],
  minUpdateSupplyV: 4.6,
  checkInIntervalS: 900,
  busVMax: 36,
  shuntFullScaleV: 0.08192,
  tempResolutions: [12, 11],
};

describe('models', () => {
  test('when an admin creates a model, then 201 returns it with its board revisions, sorted resolutions and no loggers, and an activity row is written', async () => {
    const admin = await t.signedIn('admin');
    const res = await admin.post('/api/models').set(csrf).send(fl3);
    expect(res.status).toBe(201);
    expect(res.body).toMatchObject({ ...fl3, tempResolutions: [11, 12], loggerCount: 0 });
    expect(res.body.id).toMatch(/^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/);
    expect(new Date(res.body.createdAt).toISOString()).toBe(res.body.createdAt);
    const activity = await Activity.findOne({ where: { action: 'model.created', targetId: res.body.id } });
    expect(activity?.summary).toContain('FL-3 field logger');

    const one = await admin.get(`/api/models/${res.body.id}`);
    expect(one.status).toBe(200);
    expect(one.body).toEqual(res.body);
  });

  test('when anyone lists models, then the demo model counts its seeded loggers', async () => {
    const support = await t.signedIn('support');
    const res = await support.get('/api/models');
    expect(res.status).toBe(200);
    const demo = res.body.rows.find((m: { name: string }) => m.name === 'FL-2 field logger');
    const [[{ n }]] = (await t.sequelize.query("SELECT count(*)::int AS n FROM loggers WHERE status <> 'retired'")) as [{ n: number }[], unknown];
    expect(demo.loggerCount).toBe(n);
    expect(res.body.total).toBe(res.body.rows.length);
  });

  test('when the fields are out of range, then 400 names each one', async () => {
    const admin = await t.signedIn('admin');
    const res = await admin
      .post('/api/models')
      .set(csrf)
      .send({ ...fl3, name: 'Bad', boards: [{ label: 'A', note: '' }, { label: 'a', note: '' }], checkInIntervalS: 30, busVMax: 0, shuntFullScaleV: -1, tempResolutions: [8] });
    expect(res.status).toBe(400);
    const paths = res.body.errors.map((e: { path: string }) => e.path).sort();
    expect(paths).toEqual(['boards.1.label', 'busVMax', 'checkInIntervalS', 'shuntFullScaleV', 'tempResolutions.0']);
  });

  test('when a second model takes an existing name in other capitals, then 409', async () => {
    const admin = await t.signedIn('admin');
    const res = await admin.post('/api/models').set(csrf).send({ ...fl3, name: 'fl-2 FIELD logger' });
    expect(res.status).toBe(409);
    expect(res.body.detail).toContain('FL-2 field logger');
  });

  test('when an admin changes the supply guard, then PATCH returns the model and writes model.updated', async () => {
    const admin = await t.signedIn('admin');
    const created = await admin.post('/api/models').set(csrf).send({ ...fl3, name: 'FL-3 patch test' });
    const res = await admin.patch(`/api/models/${created.body.id}`).set(csrf).send({ minUpdateSupplyV: 4.8, boards: [...fl3.boards, { label: 'C', note: 'Switching regulator' }] });
    expect(res.status).toBe(200);
    expect(res.body.minUpdateSupplyV).toBe(4.8);
    expect(res.body.boards.map((b: { label: string }) => b.label)).toEqual(['A', 'B', 'C']);
    expect(res.body.name).toBe('FL-3 patch test');
    expect(await Activity.count({ where: { action: 'model.updated', targetId: created.body.id } })).toBe(1);
  });

  test('when a PATCH would remove a board revision that loggers carry, then 409 and nothing changes', async () => {
    const admin = await t.signedIn('admin');
    const list = await admin.get('/api/models');
    const demo = list.body.rows.find((m: { name: string }) => m.name === 'FL-2 field logger');
    const res = await admin.patch(`/api/models/${demo.id}`).set(csrf).send({ boards: [{ label: 'A', note: '' }] });
    expect(res.status).toBe(409);
    expect((await admin.get(`/api/models/${demo.id}`)).body.boards).toHaveLength(3);
  });

  test('when an integrator or a release engineer tries to create a model, then 403', async () => {
    for (const role of ['integrator', 'release_engineer', 'support'] as const) {
      const agent = await t.signedIn(role);
      const res = await agent.post('/api/models').set(csrf).send({ ...fl3, name: `FL-3 ${role}` });
      expect(res.status).toBe(403);
    }
  });

  test('when the model does not exist, then 404', async () => {
    const admin = await t.signedIn('admin');
    expect((await admin.get('/api/models/00000000-0000-4000-8000-000000000000')).status).toBe(404);
  });
});
