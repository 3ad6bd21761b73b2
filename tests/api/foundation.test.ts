import { startTestApp, type TestApp } from '../helpers/app';
import { access } from '../../server/auth/access';

let t: TestApp;
beforeAll(async () => {
  t = await startTestApp({ seed: 'demo' });
});
afterAll(() => t.close());

type Layer = { route?: { path: string; methods: Record<string, boolean> } };

describe('authorization table', () => {
  test('when the router is walked, then every route has exactly one row in server/auth/access.ts', () => {
    const stack = (t.app.apiRouter as unknown as { stack: Layer[] }).stack;
    const routes = stack.filter((l) => l.route).flatMap((l) => Object.keys(l.route!.methods).map((m) => `${m.toUpperCase()} ${l.route!.path}`));
    expect(routes.length).toBeGreaterThan(5);
    const missing = routes.filter((r) => !access[r]);
    expect(missing).toEqual([]);
    // and no stale rows for routes that no longer exist
    const stale = Object.keys(access).filter((k) => !routes.includes(k));
    expect(stale).toEqual([]);
  });
});

describe('health', () => {
  test('when migrations and the demo seed are complete, then /api/health is 200 with the database up', async () => {
    const res = await t.request().get('/api/health');
    expect(res.status).toBe(200);
    expect(res.body).toMatchObject({ status: 'ok', database: 'up', migrations: 'complete', seed: 'complete' });
  });

  test('when the seed has not finished, then /api/health is 503 with Retry-After', async () => {
    t.app.services.readiness.seeded = 'pending';
    try {
      const res = await t.request().get('/api/health');
      expect(res.status).toBe(503);
      expect(res.headers['retry-after']).toBeDefined();
    } finally {
      t.app.services.readiness.seeded = 'complete';
    }
  });
});

describe('bad input', () => {
  test('when the body is malformed JSON, then 400 problem+json without a stack trace', async () => {
    const res = await t.request().post('/api/auth/sign-in').set('Content-Type', 'application/json').send('{"email": ');
    expect(res.status).toBe(400);
    expect(res.headers['content-type']).toMatch(/problem\+json/);
    expect(JSON.stringify(res.body)).not.toMatch(/at .*\.ts:\d+/);
  });

  test('when the body is larger than 1 MiB, then 413 problem+json', async () => {
    const res = await t.request().post('/api/auth/sign-in').set('Content-Type', 'application/json').send(JSON.stringify({ email: 'a'.repeat(1_100_000) }));
    expect(res.status).toBe(413);
    expect(res.body.status).toBe(413);
  });

  test('when an API path does not exist, then 404 problem+json (not the web app)', async () => {
    const res = await t.request().get('/api/nothing-here');
    expect(res.status).toBe(404);
    expect(res.body.type).toMatch(/not-found/);
  });

  test('when the server is asked for a client route, then it serves the web app (index.html)', async () => {
    const res = await t.request().get('/loggers/some-id');
    expect(res.status).toBe(200);
    expect(res.headers['content-type']).toMatch(/text\/html/);
  });
});

describe('overview', () => {
  test('when the demo is seeded, then the overview counts its loggers, sites and people from the database', async () => {
    const agent = await t.signedIn('support');
    const res = await agent.get('/api/overview');
    expect(res.status).toBe(200);
    const [[counts]] = (await t.sequelize.query(
      "SELECT count(*)::int AS total, count(*) FILTER (WHERE status='registered')::int AS registered, (SELECT count(*) FROM sites)::int AS sites FROM loggers",
    )) as [{ total: number; registered: number; sites: number }[], unknown];
    expect(res.body.loggers.total).toBe(counts.total);
    expect(res.body.loggers.registered).toBe(counts.registered);
    expect(res.body.sites).toBe(counts.sites);
    expect(res.body.loggers.online + res.body.loggers.silent).toBe(res.body.loggers.enrolled);
    expect(res.body.people).toBe(6); // five demo people + the support person this test created
  });

  test('when the activity log is listed, then it answers the list envelope {rows, total}', async () => {
    const agent = await t.signedIn('admin');
    const res = await agent.get('/api/activity?pageSize=2');
    expect(res.status).toBe(200);
    expect(res.body.rows.length).toBeLessThanOrEqual(2);
    expect(typeof res.body.total).toBe('number');
  });
});
