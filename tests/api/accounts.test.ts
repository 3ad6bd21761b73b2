import crypto from 'node:crypto';
import jwt from 'jsonwebtoken';
import { QueryTypes } from 'sequelize';
import { startTestApp, csrf, testPassword, type TestApp } from '../helpers/app';
import { linkOf, mailTo, waitForMail } from '../helpers/mailbox';
import { codeFor } from '../helpers/totp';
import { sessionCookie } from '../../server/auth/session';
import { Activity, User } from '../../server/db/models';
import { digestToken } from '../../server/auth/tokens';

let t: TestApp;
let clock = new Date();
beforeAll(async () => {
  t = await startTestApp({ seed: 'demo', now: () => clock });
});
afterAll(() => t.close());

type Agent = ReturnType<TestApp['agent']>;

async function signIn(email: string, password = testPassword): Promise<Agent> {
  const agent = t.agent();
  const res = await agent.post('/api/auth/sign-in').send({ email, password });
  if (res.status !== 200) throw new Error(`sign-in ${email}: ${res.status} ${JSON.stringify(res.body)}`);
  return agent;
}

const cookieOf = (res: { headers: Record<string, unknown> }) =>
  ([] as string[]).concat((res.headers['set-cookie'] as string[] | undefined) ?? []).map((c) => c.split(';')[0]).find((c) => c.startsWith(`${sessionCookie}=`))!;

const last = (action: string, targetId: string) => Activity.findOne({ where: { action, targetId }, order: [['id', 'DESC']] });

async function withClock<T>(at: Date, work: () => Promise<T>): Promise<T> {
  const was = clock;
  clock = at;
  try {
    return await work();
  } finally {
    clock = was;
  }
}

describe('sessions end on the server', () => {
  test('when a person signs out, then a copy of their cookie no longer works', async () => {
    const res = await t.request().post('/api/auth/sign-in').send({ email: 'lena@fernhollow.example', password: testPassword });
    const copy = cookieOf(res);
    expect((await t.request().get('/api/auth/me').set('Cookie', copy)).status).toBe(200);
    const out = await t.request().post('/api/auth/sign-out').set('Cookie', copy).set(csrf);
    expect(out.status).toBe(204);
    expect((await t.request().get('/api/auth/me').set('Cookie', copy)).status).toBe(401);
    expect((await Activity.findOne({ where: { action: 'person.signed_out', actorName: 'Lena' } }))?.summary).toBe('Lena signed out');
  });

  test('when a person signs out everywhere, then every session of theirs ends, on every device', async () => {
    const phone = await signIn('tomasz@fernhollow.example');
    const desk = await signIn('tomasz@fernhollow.example');
    const id = (await phone.get('/api/auth/me')).body.id;
    expect((await desk.post('/api/auth/sign-out-everywhere').set(csrf)).status).toBe(204);
    expect((await phone.get('/api/auth/me')).status).toBe(401);
    expect((await desk.get('/api/auth/me')).status).toBe(401);
    expect((await last('person.sessions_revoked', id))?.summary).toBe('Tomasz signed out everywhere (2 sessions ended)');
  });

  test('when a session token has no expiry, names no known person or names a non-identifier, then 401 problem, never 500 (RFC 7519 §4.1.4)', async () => {
    const secret = t.app.services.config.jwtSecret;
    const lena = await User.findOne({ where: { email: 'lena@fernhollow.example' } });
    const sign = (claims: object, subject: string) => jwt.sign({ typ: 'session', ...claims }, secret, { algorithm: 'HS256', subject, issuer: 'heliodor', audience: 'heliodor-console' });
    const forged = [
      sign({ sid: crypto.randomUUID() }, lena!.id), // no exp
      sign({ sid: crypto.randomUUID(), exp: Math.floor(Date.now() / 1000) + 600 }, crypto.randomUUID()), // unknown person
      sign({ sid: crypto.randomUUID(), exp: Math.floor(Date.now() / 1000) + 600 }, 'not-a-uuid'),
      sign({ sid: 'x', exp: Math.floor(Date.now() / 1000) + 600 }, lena!.id),
    ];
    for (const token of forged) {
      const res = await t.request().get('/api/overview').set('Cookie', `${sessionCookie}=${token}`);
      expect(res.status).toBe(401);
      expect(res.headers['content-type']).toMatch(/problem\+json/);
    }
  });
});

describe('passwords', () => {
  test('when a reset is asked for a known and an unknown address, then both get the same answer, and only the known one gets a link', async () => {
    const since = new Date();
    const known = await t.request().post('/api/auth/password-reset').send({ email: 'Ade@Fernhollow.Example' });
    const unknown = await t.request().post('/api/auth/password-reset').send({ email: 'nobody.here@fernhollow.example' });
    expect(known.status).toBe(202);
    expect(unknown.status).toBe(known.status);
    expect(unknown.body).toEqual(known.body);
    expect(Object.keys(unknown.headers).sort()).toEqual(Object.keys(known.headers).sort());
    await waitForMail('ade@fernhollow.example', 'Reset your Heliodor password', since);
    await t.app.later.settled();
    expect(mailTo('nobody.here@fernhollow.example')).toEqual([]);
  });

  test('when the reset link is used, then the new password works, the old one and every old session do not, and the link works only once and only for an hour', async () => {
    const old = await signIn('ade@fernhollow.example');
    const id = (await old.get('/api/auth/me')).body.id;
    const since = new Date();
    await t.request().post('/api/auth/password-reset').send({ email: 'ade@fernhollow.example' });
    const mail = await waitForMail('ade@fernhollow.example', 'Reset your Heliodor password', since);
    const { link, token } = linkOf(mail);
    expect(link).toMatch(/\/reset-password#t=hpr_/);
    expect(mail.html).toContain(link);

    // An hour and a second later the link is spent.
    const late = await withClock(new Date(clock.getTime() + 3601_000), () => t.request().post('/api/auth/password-reset/confirm').send({ token, password: 'hollins dairy at noon' }));
    expect(late.status).toBe(410);

    const common = await t.request().post('/api/auth/password-reset/confirm').send({ token, password: 'leavemealone' });
    expect(common.status).toBe(400);
    expect(common.body.errors[0].path).toBe('password');

    const ok = await t.request().post('/api/auth/password-reset/confirm').send({ token, password: 'hollins dairy at noon' });
    expect(ok.status).toBe(200);
    expect((await old.get('/api/auth/me')).status).toBe(401);
    expect((await t.request().post('/api/auth/sign-in').send({ email: 'ade@fernhollow.example', password: testPassword })).status).toBe(401);
    await signIn('ade@fernhollow.example', 'hollins dairy at noon');
    expect((await t.request().post('/api/auth/password-reset/confirm').send({ token, password: 'another long passphrase' })).status).toBe(410);
    expect((await last('person.password_reset', id))?.summary).toBe('Ade chose a new password from a reset link; 1 session signed out');
    // Only digests of reset links are stored.
    const [row] = await t.sequelize.query<{ n: number }>('SELECT count(*)::int AS n FROM one_time_links WHERE token_digest = :d', { type: QueryTypes.SELECT, replacements: { d: digestToken(token) } });
    expect(row.n).toBe(1);
  });

  test('when a person changes their password, then the current one is needed, common ones are refused (OWASP ASVS 4.0 §2.1.7), and their other sessions end', async () => {
    const other = await signIn('ade@fernhollow.example', 'hollins dairy at noon');
    const here = await signIn('ade@fernhollow.example', 'hollins dairy at noon');
    const wrong = await here.post('/api/auth/password').set(csrf).send({ currentPassword: 'not it at all', newPassword: 'tarnwick boat club' });
    expect(wrong.status).toBe(400);
    expect(wrong.body.errors[0].path).toBe('currentPassword');
    const common = await here.post('/api/auth/password').set(csrf).send({ currentPassword: 'hollins dairy at noon', newPassword: 'qwerty123456' });
    expect(common.status).toBe(400);
    expect(common.body.errors[0].path).toBe('newPassword');
    const ok = await here.post('/api/auth/password').set(csrf).send({ currentPassword: 'hollins dairy at noon', newPassword: 'tarnwick boat club' });
    expect(ok.status).toBe(200);
    expect((await here.get('/api/auth/me')).status).toBe(200);
    expect((await other.get('/api/auth/me')).status).toBe(401);
    expect((await last('person.password_changed', ok.body.id))?.summary).toBe('Ade changed their password; all their sessions were signed out');
  });

  test('when a person changes their name, then the console shows it and the log says so', async () => {
    const support = await t.signedIn('support', 'Lisbet');
    const res = await support.patch('/api/auth/me').set(csrf).send({ name: 'Lisbet Ward' });
    expect(res.status).toBe(200);
    expect(res.body.name).toBe('Lisbet Ward');
    expect((await last('person.renamed', res.body.id))?.summary).toBe('Lisbet now goes by Lisbet Ward');
  });
});

describe('second factor (RFC 6238)', () => {
  let secret = '';
  let recovery: string[] = [];
  const start = new Date();

  test('when a release engineer sets it up, then a code from the shown secret turns it on and ten recovery codes are shown once, stored only as digests', async () => {
    const priya = await signIn('priya@fernhollow.example');
    const setup = await priya.post('/api/auth/second-factor/setup').set(csrf);
    expect(setup.status).toBe(200);
    secret = setup.body.secret;
    expect(setup.body.uri).toMatch(/^otpauth:\/\/totp\/Heliodor:priya%40fernhollow\.example\?/);
    const wrong = await priya.post('/api/auth/second-factor/confirm').set(csrf).send({ code: codeFor(secret, new Date(start.getTime() - 3600_000)) });
    expect(wrong.status).toBe(400);
    const on = await withClock(start, () => priya.post('/api/auth/second-factor/confirm').set(csrf).send({ code: codeFor(secret, start) }));
    expect(on.status).toBe(200);
    recovery = on.body.recoveryCodes;
    expect(recovery).toHaveLength(10);
    expect(new Set(recovery).size).toBe(10);
    expect(on.body.user.secondFactor).toMatchObject({ on: true, suggested: false });
    expect((await priya.get('/api/auth/me')).body.secondFactor.on).toBe(true);

    const [stored] = await t.sequelize.query<{ totp_secret: string }>("SELECT totp_secret FROM users WHERE email = 'priya@fernhollow.example'", { type: QueryTypes.SELECT });
    expect(stored.totp_secret).not.toContain(secret);
    const digests = await t.sequelize.query<{ code_digest: string }>('SELECT code_digest FROM recovery_codes', { type: QueryTypes.SELECT });
    for (const code of recovery) expect(digests.some((d) => d.code_digest.includes(code.replace(/-/g, '')))).toBe(false);
    expect((await last('person.second_factor_on', on.body.user.id))?.summary).toBe('Priya turned on a second factor (authenticator app, 10 recovery codes)');
  });

  test('when she signs in again, then the password alone opens nothing and a code (each time step once) completes the sign-in', async () => {
    const agent = t.agent();
    const step1 = await agent.post('/api/auth/sign-in').send({ email: 'priya@fernhollow.example', password: testPassword });
    expect(step1.status).toBe(200);
    expect(step1.body).toEqual({ step: 'second_factor' });
    expect((await agent.get('/api/overview')).status).toBe(401);
    expect((await agent.get('/api/auth/me')).status).toBe(401);
    // The code already used when turning it on (same time step) is not accepted again.
    const replay = await withClock(start, () => agent.post('/api/auth/sign-in/second-factor').set(csrf).send({ code: codeFor(secret, start) }));
    expect(replay.status).toBe(401);
    const later = new Date(start.getTime() + 30_000);
    const ok = await withClock(later, () => agent.post('/api/auth/sign-in/second-factor').set(csrf).send({ code: codeFor(secret, later) }));
    expect(ok.status).toBe(200);
    expect(ok.body.user.email).toBe('priya@fernhollow.example');
    expect((await agent.get('/api/overview')).status).toBe(200);
  });

  test('when a recovery code is used, then it signs in once and never again', async () => {
    const first = t.agent();
    await first.post('/api/auth/sign-in').send({ email: 'priya@fernhollow.example', password: testPassword });
    const used = await first.post('/api/auth/sign-in/second-factor').set(csrf).send({ recoveryCode: recovery[0].toUpperCase() });
    expect(used.status).toBe(200);
    const second = t.agent();
    await second.post('/api/auth/sign-in').send({ email: 'priya@fernhollow.example', password: testPassword });
    expect((await second.post('/api/auth/sign-in/second-factor').set(csrf).send({ recoveryCode: recovery[0] })).status).toBe(401);
    expect((await Activity.findOne({ where: { action: 'person.recovery_code_used' }, order: [['id', 'DESC']] }))?.summary).toBe('Priya used a recovery code to sign in; 9 of 10 remain');
  });

  test('when she turns it off in the demo (with her password), then her other sessions end and the next sign-in is one step again', async () => {
    const here = t.agent();
    await here.post('/api/auth/sign-in').send({ email: 'priya@fernhollow.example', password: testPassword });
    await here.post('/api/auth/sign-in/second-factor').set(csrf).send({ recoveryCode: recovery[1] });
    const there = t.agent();
    await there.post('/api/auth/sign-in').send({ email: 'priya@fernhollow.example', password: testPassword });
    await there.post('/api/auth/sign-in/second-factor').set(csrf).send({ recoveryCode: recovery[2] });
    expect((await here.delete('/api/auth/second-factor').set(csrf).send({ password: 'wrong password here' })).status).toBe(400);
    const off = await here.delete('/api/auth/second-factor').set(csrf).send({ password: testPassword });
    expect(off.status).toBe(200);
    expect(off.body.secondFactor).toMatchObject({ on: false, suggested: true });
    expect((await there.get('/api/auth/me')).status).toBe(401);
    expect((await here.get('/api/auth/me')).status).toBe(200);
    const again = await t.request().post('/api/auth/sign-in').send({ email: 'priya@fernhollow.example', password: testPassword });
    expect(again.body.step).toBe('signed_in');
    expect((await last('person.second_factor_off', off.body.id))?.summary).toBe('Priya turned off their second factor; their other sessions were signed out');
  });
});

describe('production requires a second factor of admins and release engineers', () => {
  let prod: TestApp;
  let priyaCodes: string[] = [];
  beforeAll(async () => {
    prod = await startTestApp({ seed: 'demo', config: { production: true, publicUrl: 'http://127.0.0.1:9' } });
  });
  afterAll(() => prod?.close());

  test('when a release engineer without one signs in, then she can do nothing but set it up, and once it is on she can act', async () => {
    const agent = prod.agent();
    const res = await agent.post('/api/auth/sign-in').send({ email: 'priya@fernhollow.example', password: testPassword });
    expect(res.status).toBe(200);
    expect(res.body.user.secondFactor).toEqual({ on: false, required: true, setupNeeded: true, suggested: false });
    const blocked = await agent.get('/api/overview');
    expect(blocked.status).toBe(403);
    expect(blocked.body.type).toMatch(/second-factor-setup-required$/);
    expect((await agent.get('/api/auth/me')).status).toBe(200);
    const setup = await agent.post('/api/auth/second-factor/setup').set(csrf);
    const on = await agent.post('/api/auth/second-factor/confirm').set(csrf).send({ code: codeFor(setup.body.secret) });
    expect(on.status).toBe(200);
    priyaCodes = on.body.recoveryCodes;
    expect((await agent.get('/api/overview')).status).toBe(200);
    // Required here: she cannot turn it off.
    const off = await agent.delete('/api/auth/second-factor').set(csrf).send({ password: testPassword });
    expect(off.status).toBe(409);
    expect(off.body.rule).toBe('second-factor-required');
  });

  test('when an integrator signs in, then no second factor is asked of them', async () => {
    const res = await prod.request().post('/api/auth/sign-in').send({ email: 'tomasz@fernhollow.example', password: testPassword });
    expect(res.body.user.secondFactor).toEqual({ on: false, required: false, setupNeeded: false, suggested: false });
  });

  test('when the admin turns off the second factor of someone who lost their phone, then their sessions end and they must set one up again', async () => {
    const admin = prod.agent();
    await admin.post('/api/auth/sign-in').send({ email: 'morgan@fernhollow.example', password: testPassword });
    const setup = await admin.post('/api/auth/second-factor/setup').set(csrf);
    expect((await admin.post('/api/auth/second-factor/confirm').set(csrf).send({ code: codeFor(setup.body.secret) })).status).toBe(200);
    const priya = await User.findOne({ where: { email: 'priya@fernhollow.example' } });
    // Priya (second factor on since the test before) signs in with a recovery code; the reset ends that session.
    const priyaAgent = prod.agent();
    await priyaAgent.post('/api/auth/sign-in').send({ email: 'priya@fernhollow.example', password: testPassword });
    expect((await priyaAgent.post('/api/auth/sign-in/second-factor').set(csrf).send({ recoveryCode: priyaCodes[0] })).status).toBe(200);
    const reset = await admin.delete(`/api/team/${priya!.id}/second-factor`).set(csrf);
    expect(reset.status).toBe(200);
    expect(reset.body.secondFactor).toBe(false);
    expect((await priyaAgent.get('/api/overview')).status).toBe(401);
    const next = await prod.request().post('/api/auth/sign-in').send({ email: 'priya@fernhollow.example', password: testPassword });
    expect(next.body.user.secondFactor.setupNeeded).toBe(true);
    const row = await Activity.findOne({ where: { action: 'person.second_factor_off', targetId: priya!.id }, order: [['id', 'DESC']] });
    expect(row?.summary).toBe("Morgan turned off Priya's second factor; Priya was signed out and sets up a new one at the next sign-in");
  });
});
