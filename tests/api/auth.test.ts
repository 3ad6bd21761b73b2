import { CONSOLE_VERBS } from '../../schemas/auth';
import { startTestApp, csrf, testPassword, type TestApp } from '../helpers/app';
import { sessionCookie } from '../../server/auth/session';
import { Activity } from '../../server/db/models';

let t: TestApp;
beforeAll(async () => {
  t = await startTestApp({ seed: 'demo' });
});
afterAll(() => t.close());

describe('sign-in', () => {
  test('when the demo admin signs in, then the session cookie is httpOnly, SameSite=Lax and /me names the admin', async () => {
    const agent = t.agent();
    const res = await agent.post('/api/auth/sign-in').send({ email: 'morgan@fernhollow.example', password: testPassword });
    expect(res.status).toBe(200);
    expect(res.body).toMatchObject({ step: 'signed_in', user: { email: 'morgan@fernhollow.example', name: 'Morgan', role: 'admin' } });
    const cookie = String(res.headers['set-cookie']);
    expect(cookie).toContain(`${sessionCookie}=`);
    expect(cookie).toMatch(/HttpOnly/i);
    expect(cookie).toMatch(/SameSite=Lax/i);
    const me = await agent.get('/api/auth/me');
    expect(me.status).toBe(200);
    // PRODUCT.md roles: the admin may do everything, so every console verb is open to them.
    const everything = Object.fromEntries(CONSOLE_VERBS.map((verb) => [verb, true]));
    // The demo keeps one-step sign-in and invites an admin to set up a second factor; it does not insist.
    expect(me.body).toEqual({
      id: res.body.user.id,
      email: 'morgan@fernhollow.example',
      name: 'Morgan',
      role: 'admin',
      can: everything,
      secondFactor: { on: false, required: false, setupNeeded: false, suggested: true },
    });
    expect(res.body.user.can).toEqual(everything);
  });

  test('when an integrator asks who they are, then can opens registering, enrolling and sites to them and nothing else', async () => {
    const agent = await t.signedIn('integrator', 'Ade Integrator');
    const me = await agent.get('/api/auth/me');
    // PRODUCT.md roles: integrators register and enroll loggers and create sites; no releases, keys, team or activity.
    const open = Object.entries(me.body.can as Record<string, boolean>).filter(([, may]) => may).map(([verb]) => verb);
    expect(open.sort()).toEqual(['createSite', 'enrollLoggers', 'registerLoggers']);
  });

  test('when the e-mail is written in capitals, then it still signs in', async () => {
    const res = await t.request().post('/api/auth/sign-in').send({ email: 'Lena@Fernhollow.Example', password: testPassword });
    expect(res.status).toBe(200);
    expect(res.body.user.role).toBe('support');
  });

  test('when the password is wrong or the e-mail unknown, then both answer the same 401 problem', async () => {
    const wrong = await t.request().post('/api/auth/sign-in').send({ email: 'morgan@fernhollow.example', password: 'not the password' });
    const unknown = await t.request().post('/api/auth/sign-in').send({ email: 'nobody@fernhollow.example', password: 'not the password' });
    expect(wrong.status).toBe(401);
    expect(unknown.status).toBe(401);
    expect(wrong.headers['content-type']).toMatch(/application\/problem\+json/);
    expect(wrong.body.detail).toBe(unknown.body.detail);
    expect(wrong.body.title).toBe(unknown.body.title);
    expect(wrong.headers['set-cookie']).toBeUndefined();
  });

  test('when fields are missing or malformed, then 400 problem+json names them', async () => {
    const res = await t.request().post('/api/auth/sign-in').send({ email: 'not-an-email' });
    expect(res.status).toBe(400);
    expect(res.body.errors.map((e: { path: string }) => e.path).sort()).toEqual(['email', 'password']);
  });

  test('when signing out, then the cookie is cleared and /me answers 401', async () => {
    const agent = await t.signedIn('support');
    expect((await agent.get('/api/auth/me')).status).toBe(200);
    const out = await agent.post('/api/auth/sign-out').set(csrf);
    expect(out.status).toBe(204);
    expect((await agent.get('/api/auth/me')).status).toBe(401);
  });

  test('when a person signs in, then an activity row records it with the request id', async () => {
    const res = await t.request().post('/api/auth/sign-in').send({ email: 'priya@fernhollow.example', password: testPassword });
    const row = await Activity.findOne({ where: { action: 'person.signed_in', actorName: 'Priya' }, order: [['id', 'DESC']] });
    expect(row?.requestId).toBe(res.headers['x-request-id']);
  });
});

describe('sessions and roles', () => {
  test('when a request has no session, then the API answers 401 problem+json', async () => {
    const res = await t.request().get('/api/overview');
    expect(res.status).toBe(401);
    expect(res.body).toMatchObject({ status: 401, title: 'Not signed in' });
  });

  test('when the session cookie is forged, then it is ignored (401)', async () => {
    const res = await t.request().get('/api/auth/me').set('Cookie', `${sessionCookie}=eyJhbGciOiJub25lIn0.eyJzdWIiOiJ4In0.`);
    expect(res.status).toBe(401);
  });

  test('when a role lacks a right, then 403 problem+json', async () => {
    const integrator = await t.signedIn('integrator');
    const res = await integrator.get('/api/dev/outbox');
    expect(res.status).toBe(403);
    expect(res.body.title).toBe('Not allowed');
  });

  test('when a cookie-authenticated write lacks X-Requested-With, then it is refused (cross-site form guard)', async () => {
    const agent = await t.signedIn('admin');
    const res = await agent.post('/api/auth/sign-out');
    expect(res.status).toBe(403);
    expect(res.body.detail).toMatch(/X-Requested-With/);
  });
});
