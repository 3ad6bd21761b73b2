// Numbers in a manifest beyond what Heliodor keeps or compares are refused at upload with a problem that
// names the field, and nothing is stored. Sources: the security counter may be time-based (RFC 9124,
// docs/SOURCES.md §5), so it passes a PostgreSQL integer (PostgreSQL manual §8.1.1: up to +2147483647) and
// is kept as a bigint, bounded like version numbers to 2^53 − 1, the largest integer I-JSON (RFC 7493
// §2.2) carries exactly; semver.org 2.0.0's grammar itself has no bound (its BNF <numeric identifier> is
// any run of digits).
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { demoModel, keyPair, postUpload, registerKey, signedUpload, storeEntries, tableCount, type KeyPair } from './release-fixtures';

let t: TestApp;
let key: KeyPair;
let modelId: string;
let engineer: Awaited<ReturnType<TestApp['signedIn']>>;
beforeAll(async () => {
  t = await startTestApp({ seed: 'demo' });
  key = keyPair('ed25519');
  await registerKey(t, key, 'Build key');
  modelId = (await demoModel()).id;
  engineer = await t.signedIn('release_engineer', 'Priya Test');
  // A release of the model already exists, so a new version is compared with it.
  const first = await postUpload(engineer.post('/api/releases').set(csrf), signedUpload(key, { model: modelId, version: '2.4.0', counter: 5 }));
  expect(first.status).toBe(201);
});
afterAll(() => t.close());

async function expectRefusedOn(upload: ReturnType<typeof signedUpload>, field: string) {
  const entries = storeEntries(t);
  const releases = await tableCount(t, 'releases');
  const res = await postUpload(engineer.post('/api/releases').set(csrf), upload);
  expect([400, 422]).toContain(res.status);
  expect(res.headers['content-type']).toMatch(/^application\/problem\+json/);
  expect(res.body.errors.map((e: { path: string }) => e.path)).toContain(field);
  expect(storeEntries(t)).toEqual(entries);
  expect(await tableCount(t, 'releases')).toBe(releases);
  return res;
}

describe('bounds of a manifest at upload', () => {
  test('when the security counter is 2^53 (9007199254740992), one above what JSON carries exactly, then it is refused on manifest.security_counter', async () => {
    const res = await expectRefusedOn(signedUpload(key, { model: modelId, version: '2.5.0', counter: 2 ** 53 }), 'manifest.security_counter');
    expect(JSON.stringify(res.body)).toContain('9007199254740991');
  });

  test('when the security counter is 2^31 (2147483648), one above a PostgreSQL integer, then it is accepted (201) and kept exactly', async () => {
    const res = await postUpload(engineer.post('/api/releases').set(csrf), signedUpload(key, { model: modelId, version: '2.6.0', counter: 2 ** 31 }));
    expect(res.status).toBe(201);
    expect(res.body.securityCounter).toBe(2147483648);
  });

  test('when the security counter is 2^53 − 1, then it is accepted (201) and kept exactly', async () => {
    const res = await postUpload(engineer.post('/api/releases').set(csrf), signedUpload(key, { model: modelId, version: '2.6.1', counter: Number.MAX_SAFE_INTEGER }));
    expect(res.status).toBe(201);
    expect(res.body.securityCounter).toBe(9007199254740991);
  });

  test.each([
    ['a 20-digit major', '12345678901234567890.0.0'],
    ['a minor of 2^53', '2.9007199254740992.0'],
    ['a numeric pre-release identifier of 2^53', '3.0.0-rc.9007199254740992'],
  ])('when the version has %s (%s), then it is refused on manifest.version', async (_what, version) => {
    await expectRefusedOn(signedUpload(key, { model: modelId, version, counter: 6 }), 'manifest.version');
  });

  test('when the version has a patch of exactly 2^53 − 1, then it is accepted (201)', async () => {
    const res = await postUpload(engineer.post('/api/releases').set(csrf), signedUpload(key, { model: modelId, version: '2.7.9007199254740991', counter: 7 }));
    expect(res.status).toBe(201);
  });
});
