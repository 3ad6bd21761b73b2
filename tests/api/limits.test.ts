import { createApp } from '../../server/app';
import { createMailer } from '../../server/mail/mailer';
import { passwordWork } from '../../server/auth/passwords';
import { User } from '../../server/db/models';
import { appConfig } from '../helpers/config';
import { testEnv } from '../helpers/env';
import { startTestApp, csrf, testPassword, type TestApp } from '../helpers/app';
import { codeFor } from '../helpers/totp';
import request from 'supertest';

let t: TestApp;
beforeAll(async () => {
  t = await startTestApp({ seed: 'demo' });
});
afterAll(() => t.close());

// Callers are told apart by address; the app trusts X-Forwarded-For from loopback (its proxy setting).
// The addresses are documentation addresses (RFC 5737) used only as header text; nothing is sent to them.
let n = 0;
const ip = () => `198.51.100.${++n}`;
const signIn = (app: Parameters<typeof request>[0], email: string, password: string, from: string) =>
  request(app).post('/api/auth/sign-in').set('X-Forwarded-For', from).send({ email, password });

function expectLimited(res: request.Response) {
  expect(res.status).toBe(429);
  expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
  const retryAfter = Number(res.headers['retry-after']);
  expect(Number.isInteger(retryAfter)).toBe(true);
  expect(retryAfter).toBeGreaterThan(0);
  expect(res.body).toMatchObject({ status: 429, title: 'Too many attempts', retryAfter });
}

describe('sign-in attempts are limited per account and per address (429, Retry-After, problem+json)', () => {
  test('when one account gets wrong passwords in a row, then the 11th attempt is refused with 429, even with the right password', async () => {
    const from = ip();
    for (let i = 0; i < 10; i++) expect((await signIn(t.app, 'tomasz@fernhollow.example', `wrong password ${i}`, from)).status).toBe(401);
    expectLimited(await signIn(t.app, 'tomasz@fernhollow.example', 'wrong password 10', from));
    expectLimited(await signIn(t.app, 'tomasz@fernhollow.example', testPassword, ip()));
    // Another account from the same address is not affected.
    expect((await signIn(t.app, 'lena@fernhollow.example', testPassword, from)).status).toBe(200);
  });

  test('when 16 wrong passwords arrive at once, then exactly 10 are checked and 6 are refused (the counter is one atomic row)', async () => {
    const from = ip();
    const answers = await Promise.all(Array.from({ length: 16 }, (_, i) => signIn(t.app, 'ade@fernhollow.example', `parallel wrong ${i}`, from)));
    const statuses = answers.map((r) => r.status).sort();
    expect(statuses.filter((s) => s === 401)).toHaveLength(10);
    expect(statuses.filter((s) => s === 429)).toHaveLength(6);
  });

  test('when one address tries many different accounts, then it is refused after 50 failures, whichever account it names next', async () => {
    const from = ip();
    for (let batch = 0; batch < 10; batch++) {
      const answers = await Promise.all(Array.from({ length: 5 }, (_, i) => signIn(t.app, `nobody${batch}x${i}@fernhollow.example`, 'guessing here', from)));
      for (const a of answers) expect(a.status).toBe(401);
    }
    expectLimited(await signIn(t.app, 'someone.else@fernhollow.example', 'guessing here', from));
    expectLimited(await signIn(t.app, 'morgan@fernhollow.example', testPassword, from));
  });

  test('when two Heliodor apps share the database, then they share the count, and the count lives only in the database', async () => {
    const env = testEnv();
    const other = createApp({
      config: appConfig({ outboxDir: env.outboxDir, storeDir: t.storeDir, webDir: t.dataDir, jwtSecret: t.app.services.config.jwtSecret, dataKey: t.app.services.config.dataKey }),
      sequelize: t.sequelize,
      mailer: createMailer({ host: '127.0.0.1', port: env.smtpPort, secure: false, from: 'Heliodor <heliodor@localhost>' }),
      readiness: { migrated: true, seeded: 'complete' },
    });
    for (let i = 0; i < 10; i++) {
      const app = i % 2 === 0 ? t.app : other;
      expect((await signIn(app, 'priya@fernhollow.example', `wrong ${i}`, ip())).status).toBe(401);
    }
    expectLimited(await signIn(other, 'priya@fernhollow.example', 'wrong again', ip()));
    expectLimited(await signIn(t.app, 'priya@fernhollow.example', 'wrong again', ip()));
    const [rows] = await t.sequelize.query("SELECT count FROM attempt_counters WHERE key = 'sign-in:account:priya@fernhollow.example'");
    expect(rows).toEqual([{ count: 12 }]);
    // Nothing in either app's memory holds the count: without the row, the account is open again.
    await t.sequelize.query("DELETE FROM attempt_counters WHERE key = 'sign-in:account:priya@fernhollow.example'");
    expect((await signIn(other, 'priya@fernhollow.example', testPassword, ip())).status).toBe(200);
  });

  test('when password resets are asked for one address over and over, then the 6th in an hour is refused, known address or not', async () => {
    for (const email of ['lena@fernhollow.example', 'no.such.person@fernhollow.example']) {
      for (let i = 0; i < 5; i++) expect((await request(t.app).post('/api/auth/password-reset').set('X-Forwarded-For', ip()).send({ email })).status).toBe(202);
      expectLimited(await request(t.app).post('/api/auth/password-reset').set('X-Forwarded-For', ip()).send({ email }));
    }
    await t.app.later.settled();
  });

  test('when second-factor codes are guessed, then the 6th attempt is refused, even with the right code', async () => {
    const agent = await t.signedIn('release_engineer', 'Guessed Engineer');
    const setup = await agent.post('/api/auth/second-factor/setup').set(csrf);
    expect((await agent.post('/api/auth/second-factor/confirm').set(csrf).send({ code: codeFor(setup.body.secret) })).status).toBe(200);
    const from = ip();
    const pending = request.agent(t.app);
    expect((await pending.post('/api/auth/sign-in').set('X-Forwarded-For', from).send({ email: 'guessed.engineer@test.example', password: testPassword })).body.step).toBe('second_factor');
    for (let i = 0; i < 5; i++) {
      const res = await pending.post('/api/auth/sign-in/second-factor').set(csrf).set('X-Forwarded-For', from).send({ code: String(100000 + i) });
      expect(res.status).toBe(401);
    }
    expectLimited(await pending.post('/api/auth/sign-in/second-factor').set(csrf).set('X-Forwarded-For', from).send({ code: codeFor(setup.body.secret, new Date(Date.now() + 30_000)) }));
  });
});

describe('no account discovery, and no stalls', () => {
  test('when 16 sign-ins with unknown addresses flood in, then a health check sent after them answers before they are all done (bcrypt runs in worker threads)', async () => {
    const finished: string[] = [];
    const flood = Array.from({ length: 16 }, (_, i) => signIn(t.app, `flood${i}@fernhollow.example`, 'not a password', ip()).then(() => finished.push('sign-in')));
    await new Promise((r) => setTimeout(r, 20));
    const health = request(t.app).get('/api/health').then((r) => {
      finished.push('health');
      return r;
    });
    expect((await health).status).toBe(200);
    await Promise.all(flood);
    expect(finished.indexOf('health')).toBeLessThan(finished.length - 1);
  });

  test('when an address is unknown or the password is wrong, then the server does the same work: one bcrypt comparison at the cost of real hashes', async () => {
    const cost = t.app.services.config.production ? 12 : 10;
    const known = await User.findOne({ where: { email: 'morgan@fernhollow.example' } });
    expect(known!.passwordHash!.startsWith(`$2b$${cost}$`) || known!.passwordHash!.startsWith(`$2a$${cost}$`)).toBe(true);
    for (const email of ['morgan@fernhollow.example', 'never.was.here@fernhollow.example']) {
      const before = new Map(passwordWork.compares);
      const res = await signIn(t.app, email, 'definitely not it', ip());
      expect(res.status).toBe(401);
      const delta = [...passwordWork.compares].map(([c, k]) => [c, k - (before.get(c) ?? 0)]).filter(([, d]) => d !== 0);
      expect(delta).toEqual([[cost, 1]]);
    }
  });

  test('when unknown addresses and wrong passwords are timed side by side, then their time distributions overlap (no timing oracle)', async () => {
    // A relative comparison inside one run, interleaved, so machine speed and load affect both sides alike.
    // Earlier, the decoy hash was cheaper than real hashes (cost 10 against 12): about 3.7 times faster.
    const accounts = ['tomasz@fernhollow.example', 'lena@fernhollow.example', 'morgan@fernhollow.example', 'priya@fernhollow.example'];
    const knownMs: number[] = [];
    const unknownMs: number[] = [];
    const time = async (email: string) => {
      const started = process.hrtime.bigint();
      const res = await signIn(t.app, email, 'a wrong password', ip());
      expect([401, 429]).toContain(res.status);
      return { ms: Number(process.hrtime.bigint() - started) / 1e6, limited: res.status === 429 };
    };
    // Fresh accounts' counters: the earlier tests used some of them up.
    await t.sequelize.query("DELETE FROM attempt_counters WHERE key LIKE 'sign-in:account:%'");
    for (let i = 0; i < 16; i++) {
      const pair = [() => time(accounts[i % accounts.length]), () => time(`stranger${i}@fernhollow.example`)];
      if (i % 2) pair.reverse();
      for (const [k, run] of pair.entries()) {
        const r = await run();
        expect(r.limited).toBe(false);
        ((i % 2 === 0) === (k === 0) ? knownMs : unknownMs).push(r.ms);
      }
    }
    const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];
    const ratio = median(knownMs) / median(unknownMs);
    expect(ratio).toBeGreaterThan(0.5);
    expect(ratio).toBeLessThan(2);
  });
});
