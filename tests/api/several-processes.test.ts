// Several Heliodor processes on one database (HELIODOR_WORKERS, or several hosts; DEVELOPERS.md "Several
// processes"): two real server processes (server/index.ts, each on a port of its own) share one test
// database. A share widened through one is offered by the other without waiting for its cache to
// expire — the release cache listens for PostgreSQL NOTIFY (PostgreSQL manual, LISTEN/NOTIFY) — and the
// per-logger check-in limit holds across both, because it is counted in PostgreSQL.
import { spawn, type ChildProcess } from 'node:child_process';
import path from 'node:path';
import { startTestApp, testPassword, type TestApp } from '../helpers/app';
import { checkInBody, createFleet, type Fleet } from './device-fixtures';
import { bucketOf } from '../../server/rollout/cohort';

const root = path.resolve(__dirname, '../..');
let t: TestApp;
let fleet: Fleet;
const servers: { child: ChildProcess; base: string }[] = [];

/** Starts `server/index.ts` against the test's database on a free port; resolves with its address once ready. */
function startServer(databaseUrl: string): Promise<{ child: ChildProcess; base: string }> {
  const child = spawn(process.execPath, ['--import', 'tsx', 'server/index.ts'], {
    cwd: root,
    env: {
      ...process.env,
      DATABASE_URL: databaseUrl,
      PORT: '0',
      HELIODOR_ENV: 'test',
      HELIODOR_DEMO: '0',
      HELIODOR_SMTP_EXTERNAL: '1',
      HELIODOR_STORE: t.storeDir,
      HELIODOR_DATA: t.dataDir,
      HELIODOR_LOG_FORMAT: 'pretty',
      HELIODOR_LOG_LEVEL: 'warn',
      HELIODOR_WORKERS: '1',
    },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  return new Promise((resolve, reject) => {
    let out = '';
    const onData = (chunk: Buffer) => {
      out += chunk.toString('utf8');
      const m = /Heliodor ready at (http:\/\/127\.0\.0\.1:\d+)/.exec(out);
      if (m) resolve({ child, base: m[1] });
    };
    child.stdout!.on('data', onData);
    child.stderr!.on('data', onData);
    child.on('exit', (code) => reject(new Error(`the server ended (exit ${code}) before it was ready:\n${out}`)));
  });
}

beforeAll(async () => {
  t = await startTestApp();
  fleet = await createFleet(t);
  const c = t.sequelize.config;
  const url = `postgres://${encodeURIComponent(c.username)}:${encodeURIComponent(c.password ?? '')}@${c.host}:${c.port}/${c.database}`;
  servers.push(...(await Promise.all([startServer(url), startServer(url)])));
}, 300_000);

afterAll(async () => {
  await Promise.all(
    servers.map(
      ({ child }) =>
        new Promise<void>((resolve) => {
          if (child.exitCode !== null) return resolve();
          child.once('exit', () => resolve());
          child.kill('SIGTERM');
        }),
    ),
  );
  await t?.close();
});

const post = (base: string, p: string, body: unknown, headers: Record<string, string>) =>
  fetch(base + p, { method: 'POST', headers: { 'Content-Type': 'application/json', ...headers }, body: JSON.stringify(body) });

test('when a release engineer widens a share through one process, then the other process offers the release within a generous deadline', async () => {
  const [one, other] = servers;
  const release = await fleet.release({ version: '2.4.0', state: 'widening', share: 0 });
  // A logger whose bucket a widen can reach (a widen asks for 1–99 %, lib/share.ts), and the share that includes it.
  let lg = await fleet.logger();
  while (bucketOf(lg.id, release.id) >= 9_900) lg = await fleet.logger();
  const share = Math.max(1, Math.ceil((bucketOf(lg.id, release.id) + 1) / 100));
  // Signed in through the first process (the person is made in the database first).
  await t.signedIn('release_engineer', 'Priya Widen');
  const signIn = await post(one.base, '/api/auth/sign-in', { email: 'priya.widen@test.example', password: testPassword }, {});
  expect(signIn.status).toBe(200);
  const cookie = signIn.headers.getSetCookie().map((x) => x.split(';')[0]).join('; ');

  // The other process caches the release at share 0: no offer.
  const checkIn = async () => (await (await post(other.base, '/api/device/v1/check-in', checkInBody('2.3.1'), { Authorization: `Bearer ${lg.token}` })).json()) as { offer: { release: string } | null };
  expect((await checkIn()).offer).toBeNull();

  const widened = await post(one.base, `/api/releases/${release.id}/transitions`, { action: 'widen', share }, { Cookie: cookie, 'X-Requested-With': 'heliodor' });
  expect(widened.status).toBe(200);

  // Poll the other process: the notification drops its cached copy (a deadline of 4 s, below the 5 s time-to-live).
  const deadline = Date.now() + 4_000;
  let offered: string | null = null;
  while (offered === null && Date.now() < deadline) {
    offered = (await checkIn()).offer?.release ?? null;
    if (offered === null) await new Promise((r) => setTimeout(r, 100));
  }
  expect(offered).toBe(release.id);
});

test('when a logger checks in through two processes, then the per-logger limit of 60 a minute holds across both', async () => {
  const [one, other] = servers;
  const lg = await fleet.logger();
  const statuses: number[] = [];
  for (let i = 0; i < 62; i++) {
    const base = i % 2 === 0 ? one.base : other.base;
    statuses.push((await post(base, '/api/device/v1/check-in', checkInBody('2.3.1'), { Authorization: `Bearer ${lg.token}` })).status);
  }
  // HELIODOR_DEVICE_RATE defaults to 60 (DEVICE_API.md "Load manners"): the 61st and 62nd are refused.
  expect(statuses.slice(0, 60).every((s) => s === 200)).toBe(true);
  expect(statuses.slice(60)).toEqual([429, 429]);
});
