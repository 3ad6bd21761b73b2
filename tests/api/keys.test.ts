// Signing keys. Key ids are checked against node:crypto's own SPKI DER export hashed
// with SHA-256 (the definition in DEVICE_API.md "The signed manifest").
import crypto from 'node:crypto';
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { Activity, SigningKey } from '../../server/db/models';
import { keyPair, tableCount } from './release-fixtures';

let t: TestApp;
beforeAll(async () => {
  t = await startTestApp({ seed: 'none' });
});
afterAll(() => t.close());

describe('registering a public key', () => {
  test.each(['ed25519', 'ecdsa-p256-sha256'] as const)('when an admin registers a %s public key, then 201 with the key id from SHA-256 of its SPKI DER', async (algorithm) => {
    const admin = await t.signedIn('admin');
    const key = keyPair(algorithm);
    const res = await admin.post('/api/keys').set(csrf).send({ name: `Build key ${algorithm}`, publicKeyPem: key.publicPem });
    expect(res.status).toBe(201);
    const expectedKeyId = crypto.createHash('sha256').update(crypto.createPublicKey(key.publicPem).export({ type: 'spki', format: 'der' })).digest('hex').slice(0, 16);
    expect(res.body).toMatchObject({ name: `Build key ${algorithm}`, keyId: expectedKeyId, algorithm, state: 'active', retiredAt: null, revokedAt: null, releaseCount: 0 });
    expect(res.body.can).toEqual({ retire: true, revoke: true });
    expect(res.body.publicKeyPem).toContain('-----BEGIN PUBLIC KEY-----');
    const list = await admin.get('/api/keys');
    expect(list.body.rows.map((k: { keyId: string }) => k.keyId)).toContain(expectedKeyId);
    expect(await Activity.count({ where: { action: 'key.registered', targetId: res.body.id } })).toBe(1);
  });

  test('when a private key is sent, then 400 says never send a private key and nothing is stored', async () => {
    const admin = await t.signedIn('admin');
    const before = await tableCount(t, 'signing_keys');
    const res = await admin.post('/api/keys').set(csrf).send({ name: 'Oops', publicKeyPem: keyPair().privatePem });
    expect(res.status).toBe(400);
    expect(res.body.detail).toMatch(/never send a private key/i);
    expect(res.body.errors[0].path).toBe('publicKeyPem');
    expect(await tableCount(t, 'signing_keys')).toBe(before);
  });

  test('when the text is not a PEM public key, or an RSA key, then 400 names publicKeyPem', async () => {
    const admin = await t.signedIn('admin');
    const rsa = crypto.generateKeyPairSync('rsa', { modulusLength: 2048 }).publicKey.export({ type: 'spki', format: 'pem' });
    for (const publicKeyPem of ['hello', String(rsa)]) {
      const res = await admin.post('/api/keys').set(csrf).send({ name: 'Bad', publicKeyPem });
      expect(res.status).toBe(400);
      expect(res.body.errors.map((e: { path: string }) => e.path)).toEqual(['publicKeyPem']);
    }
  });

  test('when the same public key is registered twice, then 409', async () => {
    const admin = await t.signedIn('admin');
    const key = keyPair();
    expect((await admin.post('/api/keys').set(csrf).send({ name: 'First', publicKeyPem: key.publicPem })).status).toBe(201);
    const again = await admin.post('/api/keys').set(csrf).send({ name: 'Second', publicKeyPem: key.publicPem.replace(/\n/g, '\r\n') });
    expect(again.status).toBe(409);
    expect(again.body.detail).toContain(key.keyId);
  });

  test('when a release engineer registers a key, then 403; listing is allowed; an integrator may not list', async () => {
    const engineer = await t.signedIn('release_engineer');
    expect((await engineer.post('/api/keys').set(csrf).send({ name: 'Mine', publicKeyPem: keyPair().publicPem })).status).toBe(403);
    const listed = await engineer.get('/api/keys');
    expect(listed.status).toBe(200);
    // PRODUCT.md roles: release engineers do no key admin, so no key offers them a move.
    expect(listed.body.rows.length).toBeGreaterThan(0);
    for (const k of listed.body.rows) expect(k.can).toEqual({ retire: false, revoke: false });
    expect((await (await t.signedIn('integrator')).get('/api/keys')).status).toBe(403);
  });
});

describe('key states', () => {
  async function newKey() {
    const admin = await t.signedIn('admin');
    const res = await admin.post('/api/keys').set(csrf).send({ name: 'Rotating', publicKeyPem: keyPair().publicPem });
    return { admin, id: res.body.id as string };
  }

  test('when an active key is retired and then revoked, then each move is recorded and revoked is final', async () => {
    const { admin, id } = await newKey();
    const retired = await admin.post(`/api/keys/${id}/retire`).set(csrf);
    expect(retired.status).toBe(200);
    expect(retired.body.state).toBe('retired');
    expect(retired.body.retiredAt).not.toBeNull();
    expect(retired.body.can).toEqual({ retire: false, revoke: true });
    const retireAgain = await admin.post(`/api/keys/${id}/retire`).set(csrf);
    expect(retireAgain.status).toBe(409);
    expect(retireAgain.body.allowedActions).toEqual(['revoke']);
    const revoked = await admin.post(`/api/keys/${id}/revoke`).set(csrf);
    expect(revoked.body.state).toBe('revoked');
    expect(revoked.body.revokedAt).not.toBeNull();
    expect(revoked.body.can).toEqual({ retire: false, revoke: false });
    const revokeAgain = await admin.post(`/api/keys/${id}/revoke`).set(csrf);
    expect(revokeAgain.status).toBe(409);
    expect(revokeAgain.body.allowedActions).toEqual([]);
    expect(await Activity.count({ where: { targetId: id, action: ['key.retired', 'key.revoked'] } })).toBe(2);
  });

  test('when an active key is revoked directly, then it is revoked', async () => {
    const { admin, id } = await newKey();
    const res = await admin.post(`/api/keys/${id}/revoke`).set(csrf);
    expect(res.status).toBe(200);
    expect((await SigningKey.findByPk(id))?.state).toBe('revoked');
  });

  test('when the key does not exist, then 404', async () => {
    const admin = await t.signedIn('admin');
    const res = await admin.post(`/api/keys/${crypto.randomUUID()}/retire`).set(csrf);
    expect(res.status).toBe(404);
  });
});
