// Sites: who may create and edit, coordinate ranges, IANA time zones, activity rows.
import { startTestApp, csrf, testPassword, type TestApp } from '../helpers/app';
import { Activity, Site } from '../../server/db/models';

let t: TestApp;
beforeAll(async () => {
  t = await startTestApp({ seed: 'demo' });
});
afterAll(() => t.close());

/** Signs in as a person of the demo scenario (PRODUCT.md: Tomasz and Ade are integrators). */
async function demo(name: 'Morgan' | 'Tomasz' | 'Ade' | 'Lena') {
  const agent = t.agent();
  const res = await agent.post('/api/auth/sign-in').send({ email: `${name.toLowerCase()}@fernhollow.example`, password: testPassword });
  if (res.status !== 200) throw new Error(`sign-in as ${name} failed`);
  return { agent, id: res.body.user.id as string };
}

const newSite = {
  name: 'Coldbrook Scout Hut',
  customer: 'Coldbrook Scouts',
  address: 'Bridle Way, Coldbrook',
  latitude: 52.1333,
  longitude: -1.9611,
  timeZone: 'Europe/London',
  notes: 'Key with the caretaker',
};

const siteId = async (name: string) => (await Site.findOne({ where: { name } }))!.id;

describe('sites', () => {
  test('when an integrator creates a site, then 201 and the integrator is assigned to it, and site.created is written', async () => {
    const tomasz = await demo('Tomasz');
    const res = await tomasz.agent.post('/api/sites').set(csrf).send(newSite);
    expect(res.status).toBe(201);
    expect(res.body).toMatchObject({ ...newSite, integratorIds: [tomasz.id], integrators: [{ id: tomasz.id, name: 'Tomasz' }], loggerCount: 0 });
    expect(await Activity.count({ where: { action: 'site.created', targetId: res.body.id } })).toBe(1);
    const list = await tomasz.agent.get('/api/sites');
    expect(list.body.rows.map((s: { id: string }) => s.id)).toContain(res.body.id);
  });

  test('when an integrator lists sites, then only the sites assigned to them appear', async () => {
    const ade = await demo('Ade');
    const res = await ade.agent.get('/api/sites');
    expect(res.status).toBe(200);
    expect(res.body.rows.length).toBeGreaterThan(0);
    expect(res.body.total).toBe(res.body.rows.length);
    for (const site of res.body.rows) expect(site.integratorIds).toContain(ade.id);
    const admin = await demo('Morgan');
    const all = await admin.agent.get('/api/sites');
    expect(all.body.total).toBe(await Site.count());
  });

  test('when the query q is given, then sites are matched by name, customer or address without regard to case', async () => {
    const admin = await demo('Morgan');
    const res = await admin.agent.get('/api/sites').query({ q: 'pump' });
    expect(res.body.rows.map((s: { name: string }) => s.name)).toEqual(['Brackenford Pump House']);
    const wildcard = await admin.agent.get('/api/sites').query({ q: '%' });
    expect(wildcard.body.total).toBe(0);
  });

  test('when an integrator edits a site assigned to them, then 200 and site.updated is written', async () => {
    const tomasz = await demo('Tomasz');
    const id = await siteId('Aldmere Village Hall');
    const res = await tomasz.agent.patch(`/api/sites/${id}`).set(csrf).send({ notes: 'Logger in the plant room' });
    expect(res.status).toBe(200);
    expect(res.body.notes).toBe('Logger in the plant room');
    expect(res.body.name).toBe('Aldmere Village Hall');
    expect(await Activity.count({ where: { action: 'site.updated', targetId: id } })).toBe(1);
  });

  test('when an integrator edits or reads a site not assigned to them, then 403 and nothing changes', async () => {
    const tomasz = await demo('Tomasz');
    const id = await siteId('Hollins Dairy');
    const res = await tomasz.agent.patch(`/api/sites/${id}`).set(csrf).send({ notes: 'not mine' });
    expect(res.status).toBe(403);
    expect((await Site.findByPk(id))!.notes).toBe('');
    expect((await tomasz.agent.get(`/api/sites/${id}`)).status).toBe(403);
  });

  test('when an admin edits any site and assigns integrators, then 200 with the new assignment', async () => {
    const admin = await demo('Morgan');
    const tomasz = await demo('Tomasz');
    const ade = await demo('Ade');
    const id = await siteId('Hollins Dairy');
    const res = await admin.agent.patch(`/api/sites/${id}`).set(csrf).send({ integratorIds: [ade.id, tomasz.id], timeZone: 'Europe/Dublin' });
    expect(res.status).toBe(200);
    expect(res.body.integratorIds.sort()).toEqual([ade.id, tomasz.id].sort());
    expect(res.body.timeZone).toBe('Europe/Dublin');
    expect((await tomasz.agent.get(`/api/sites/${id}`)).status).toBe(200);
  });

  test('when integratorIds names someone who is not an integrator, then 400 names the list position', async () => {
    const admin = await demo('Morgan');
    const lena = await demo('Lena');
    const res = await admin.agent.post('/api/sites').set(csrf).send({ ...newSite, name: 'Wrong people', integratorIds: [lena.id] });
    expect(res.status).toBe(400);
    expect(res.body.errors).toEqual([{ path: 'integratorIds.0', message: 'is not an active integrator' }]);
    expect(await Site.count({ where: { name: 'Wrong people' } })).toBe(0);
  });

  test('when latitude or longitude is outside -90…90 / -180…180 (WGS 84 ranges, common practice), then 400 names the field', async () => {
    const admin = await demo('Morgan');
    for (const [latitude, longitude, path] of [
      [90.0001, 0, 'latitude'],
      [-90.5, 0, 'latitude'],
      [0, 180.01, 'longitude'],
      [0, -181, 'longitude'],
    ] as const) {
      const res = await admin.agent.post('/api/sites').set(csrf).send({ ...newSite, name: 'Out of range', latitude, longitude });
      expect(res.status).toBe(400);
      expect(res.body.errors.map((e: { path: string }) => e.path)).toEqual([path]);
    }
    const edge = await admin.agent.post('/api/sites').set(csrf).send({ ...newSite, name: 'South Pole hut', latitude: -90, longitude: 180 });
    expect(edge.status).toBe(201);
  });

  test('when only one of latitude and longitude is given, then 400 asks for the other', async () => {
    const admin = await demo('Morgan');
    const res = await admin.agent.post('/api/sites').set(csrf).send({ ...newSite, name: 'Half placed', longitude: undefined });
    expect(res.status).toBe(400);
    expect(res.body.errors[0].path).toBe('longitude');
    const id = await siteId('Aldmere Village Hall');
    const patch = await admin.agent.patch(`/api/sites/${id}`).set(csrf).send({ latitude: null });
    expect(patch.status).toBe(400);
    const cleared = await admin.agent.patch(`/api/sites/${id}`).set(csrf).send({ latitude: null, longitude: null });
    expect(cleared.status).toBe(200);
    expect(cleared.body).toMatchObject({ latitude: null, longitude: null });
  });

  test('when the time zone is not an IANA name (checked with Intl.DateTimeFormat, the reference), then 400', async () => {
    const admin = await demo('Morgan');
    for (const timeZone of ['Europe/Aldmere', 'GMT+25', '', 'London']) {
      const res = await admin.agent.post('/api/sites').set(csrf).send({ ...newSite, name: 'Bad zone', timeZone });
      expect(res.status).toBe(400);
      expect(res.body.errors.map((e: { path: string }) => e.path)).toEqual(['timeZone']);
    }
    const utc = await admin.agent.post('/api/sites').set(csrf).send({ ...newSite, name: 'Zone UTC', timeZone: 'UTC' });
    expect(utc.status).toBe(201);
    const lower = await admin.agent.post('/api/sites').set(csrf).send({ ...newSite, name: 'Zone lower case', timeZone: 'europe/london' });
    expect(lower.status).toBe(201);
    expect(lower.body.timeZone).toBe(new Intl.DateTimeFormat('en', { timeZone: 'Europe/London' }).resolvedOptions().timeZone);
  });

  test('when support or a release engineer tries to create a site, then 403', async () => {
    for (const role of ['support', 'release_engineer'] as const) {
      const agent = await t.signedIn(role);
      expect((await agent.post('/api/sites').set(csrf).send({ ...newSite, name: `By ${role}` })).status).toBe(403);
    }
    const support = await t.signedIn('support');
    expect((await support.get('/api/sites')).status).toBe(200);
  });
});

describe('assigning integrators and what each person may do with a site (can)', () => {
  // PRODUCT.md roles: the admin keeps the team, so only the admin says who works at a site; integrators
  // create and edit the sites assigned to them; support adds notes to sites.
  const open = (can: Record<string, boolean>) => Object.keys(can).filter((verb) => can[verb]).sort();

  test('when an integrator tries to add a colleague to their site or to a new site, then 403 and the assignment is unchanged; their own list back is fine', async () => {
    const tomasz = await demo('Tomasz');
    const ade = await demo('Ade');
    const id = await siteId('Aldmere Village Hall');
    const add = await tomasz.agent.patch(`/api/sites/${id}`).set(csrf).send({ integratorIds: [tomasz.id, ade.id] });
    expect(add.status).toBe(403);
    expect(add.body.detail).toBe('Only an admin assigns integrators to a site.');
    expect((await tomasz.agent.get(`/api/sites/${id}`)).body.integratorIds).toEqual([tomasz.id]);
    const same = await tomasz.agent.patch(`/api/sites/${id}`).set(csrf).send({ integratorIds: [tomasz.id] });
    expect(same.status).toBe(200);
    const created = await tomasz.agent.post('/api/sites').set(csrf).send({ ...newSite, name: 'Two-person site', integratorIds: [ade.id] });
    expect(created.status).toBe(403);
    expect(await Site.count({ where: { name: 'Two-person site' } })).toBe(0);
  });

  test('when each role reads a site, then can follows the roles table and the assignment', async () => {
    const id = await siteId('Aldmere Village Hall'); // assigned to Tomasz in the demo scenario
    const can = async (name: 'Morgan' | 'Tomasz' | 'Lena') => open((await (await demo(name)).agent.get(`/api/sites/${id}`)).body.can);
    expect(await can('Morgan')).toEqual(['addNote', 'assignIntegrators', 'edit', 'enroll']);
    expect(await can('Tomasz')).toEqual(['edit', 'enroll']);
    expect(await can('Lena')).toEqual(['addNote']);
    const list = await (await demo('Tomasz')).agent.get('/api/sites');
    for (const row of list.body.rows) expect(open(row.can)).toEqual(['edit', 'enroll']);
  });
});
