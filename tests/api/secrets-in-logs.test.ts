import { Writable } from 'node:stream';
import pino from 'pino';
import { startTestApp, csrf, testPassword, type TestApp } from '../helpers/app';
import { linkOf, waitForMail } from '../helpers/mailbox';
import { codeFor } from '../helpers/totp';

// Everything Heliodor logs while the flows run, at the most talkative level.
const lines: string[] = [];
const sink = new Writable({
  write(chunk, _enc, done) {
    lines.push(String(chunk));
    done();
  },
});

let t: TestApp;
beforeAll(async () => {
  t = await startTestApp({ seed: 'demo', logger: pino({ level: 'trace' }, sink) });
});
afterAll(() => t.close());

test('when people are invited, join, reset and change passwords, set up a second factor and create API tokens, then none of the secrets appear in the log', async () => {
  const secrets: Record<string, string> = {};
  const admin = t.agent();
  await admin.post('/api/auth/sign-in').send({ email: 'morgan@fernhollow.example', password: testPassword });
  await admin.post('/api/auth/sign-in').send({ email: 'morgan@fernhollow.example', password: 'a wrong password typed' });
  secrets.wrongPassword = 'a wrong password typed';
  secrets.demoPassword = testPassword;

  // Invitation: the link's token, then the invitee's password.
  const email = `quill.${Date.now()}@fernhollow.example`;
  let since = new Date();
  expect((await admin.post('/api/team/invitations').set(csrf).send({ email, role: 'release_engineer' })).status).toBe(201);
  secrets.invitationToken = linkOf(await waitForMail(email, 'invited you', since)).token;
  const invitee = t.agent();
  expect((await invitee.post('/api/invitations/lookup').send({ token: secrets.invitationToken })).status).toBe(200);
  secrets.inviteePassword = 'quill joins the vale';
  expect((await invitee.post('/api/invitations/accept').send({ token: secrets.invitationToken, name: 'Quill', password: secrets.inviteePassword })).status).toBe(201);

  // Second factor: the secret, a code, the recovery codes, one of them used.
  const setup = await invitee.post('/api/auth/second-factor/setup').set(csrf);
  secrets.totpSecret = setup.body.secret;
  secrets.totpCode = codeFor(setup.body.secret);
  const on = await invitee.post('/api/auth/second-factor/confirm').set(csrf).send({ code: secrets.totpCode });
  expect(on.status).toBe(200);
  on.body.recoveryCodes.forEach((c: string, i: number) => (secrets[`recoveryCode${i}`] = c));
  const again = t.agent();
  await again.post('/api/auth/sign-in').send({ email, password: secrets.inviteePassword });
  expect((await again.post('/api/auth/sign-in/second-factor').set(csrf).send({ recoveryCode: on.body.recoveryCodes[3] })).status).toBe(200);

  // Password change, then a reset by link.
  secrets.changedPassword = 'quill moves to tarnwick';
  expect((await again.post('/api/auth/password').set(csrf).send({ currentPassword: secrets.inviteePassword, newPassword: secrets.changedPassword })).status).toBe(200);
  since = new Date();
  await t.request().post('/api/auth/password-reset').send({ email });
  secrets.resetToken = linkOf(await waitForMail(email, 'Reset your Heliodor password', since)).token;
  secrets.resetPassword = 'quill forgot it again';
  expect((await t.request().post('/api/auth/password-reset/confirm').send({ token: secrets.resetToken, password: secrets.resetPassword })).status).toBe(200);

  // An API token, and a bad one.
  const token = await admin.post('/api/tokens').set(csrf).send({ name: 'Build server', scopes: ['images:write'], expiresAt: new Date(Date.now() + 86_400_000).toISOString() });
  expect(token.status).toBe(201);
  secrets.apiToken = token.body.token;
  await t.request().get('/api/loggers').set('Authorization', `Bearer ${secrets.apiToken}`);

  // The session cookies too.
  secrets.sessionCookie = String(again.jar.getCookie('heliodor_session', { domain: '127.0.0.1', path: '/', secure: false, script: false })?.value ?? '');
  expect(secrets.sessionCookie.length).toBeGreaterThan(20);

  await t.app.later.settled();
  const log = lines.join('');
  // The log did record these requests, so its silence about the secrets means something.
  for (const url of ['/api/team/invitations', '/api/invitations/accept', '/api/auth/second-factor/confirm', '/api/auth/password-reset/confirm', '/api/tokens']) {
    expect(log).toContain(url);
  }
  for (const [name, value] of Object.entries(secrets)) {
    expect({ name, found: log.includes(value) }).toEqual({ name, found: false });
  }
});
