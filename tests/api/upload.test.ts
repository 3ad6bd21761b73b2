// Verified upload into the firmware store. Every refusal asserts that the store
// directory holds no new entry (hidden temporary files included) and that no release or image row
// was written. Signatures are made with node:crypto (RFC 8032 Ed25519; ECDSA P-256/SHA-256 as raw
// r‖s); image digests with node:crypto SHA-256 (FIPS 180-4); versions per semver.org 2.0.0.
import crypto from 'node:crypto';
import fs from 'node:fs';
import http from 'node:http';
import path from 'node:path';
import request from 'supertest';
import { QueryTypes } from 'sequelize';
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { Activity, Release, ReleaseTransition } from '../../server/db/models';
import { demoModel, keyPair, postUpload, registerKey, signBytes, signedUpload, storeEntries, tableCount, type KeyPair } from './release-fixtures';

let t: TestApp;
let key: KeyPair;
let modelId: string;
beforeAll(async () => {
  t = await startTestApp({ seed: 'demo' });
  key = keyPair('ed25519');
  await registerKey(t, key, 'Build key');
  modelId = (await demoModel()).id;
});
afterAll(() => t.close());

// One signed-in session for the engineer (signing in hashes a password: slow on purpose).
let engineerAgent: Awaited<ReturnType<TestApp['signedIn']>> | undefined;
async function engineer() {
  return (engineerAgent ??= await t.signedIn('release_engineer', 'Priya Test'));
}

/** Runs a refused upload and checks that nothing was stored: no file, no row. */
async function expectRefused(send: () => Promise<request.Response>, status: number, fieldPath: string | null) {
  const entries = storeEntries(t);
  const releases = await tableCount(t, 'releases');
  const images = await tableCount(t, 'images');
  const res = await send();
  expect(res.status).toBe(status);
  expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
  if (fieldPath) expect(res.body.errors.map((e: { path: string }) => e.path)).toContain(fieldPath);
  expect(storeEntries(t)).toEqual(entries);
  expect(await tableCount(t, 'releases')).toBe(releases);
  expect(await tableCount(t, 'images')).toBe(images);
  return res;
}

describe('a verified upload', () => {
  test('when a release engineer uploads a signed image, then 201 draft, the file is stored under its SHA-256 and the history starts', async () => {
    const agent = await engineer();
    const upload = signedUpload(key, { model: modelId, version: '2.4.0', boards: ['B', 'C'], counter: 5 });
    const res = await postUpload(agent.post('/api/releases').set(csrf), upload, { notes: 'Faster check-ins.' });
    expect(res.status).toBe(201);
    const sha256 = crypto.createHash('sha256').update(upload.image).digest('hex');
    expect(res.body).toMatchObject({ version: '2.4.0', modelId, modelName: 'FL-2 field logger', state: 'draft', channel: 'stable', share: 0, boards: ['B', 'C'], manifestBoards: ['B', 'C'], securityCounter: 5, image: { sha256, size: upload.image.length }, flagged: false, allowedActions: ['start_pilot'] });
    expect(res.body.key).toMatchObject({ keyId: key.keyId, state: 'active' });
    expect(storeEntries(t)).toEqual([sha256]);
    expect(fs.readFileSync(path.join(t.storeDir, sha256)).equals(upload.image)).toBe(true);
    const row = await Release.findByPk(res.body.id);
    expect(row?.manifest.equals(upload.manifest)).toBe(true);
    expect(row?.signature.toString('base64')).toBe(upload.signature);
    expect(res.body.history).toEqual([expect.objectContaining({ action: 'upload', fromState: null, toState: 'draft', actorName: 'Priya Test' })]);
    expect(await ReleaseTransition.count({ where: { releaseId: res.body.id } })).toBe(1);
    expect(await Activity.count({ where: { action: 'release.uploaded', targetId: res.body.id } })).toBe(1);
  });

  test('when the version is a pre-release, then the channel defaults to early; an explicit channel wins', async () => {
    const agent = await engineer();
    const rc = await postUpload(agent.post('/api/releases').set(csrf), signedUpload(key, { model: modelId, version: '2.5.0-rc.1' }));
    expect(rc.status).toBe(201);
    expect(rc.body.channel).toBe('early');
    const chosen = await postUpload(agent.post('/api/releases').set(csrf), signedUpload(key, { model: modelId, version: '2.5.0-rc.2' }), { channel: 'stable' });
    expect(chosen.body.channel).toBe('stable');
  });

  test('when the same image is uploaded for two versions, then it is stored once', async () => {
    const agent = await engineer();
    const image = crypto.randomBytes(2048);
    const first = await postUpload(agent.post('/api/releases').set(csrf), signedUpload(key, { model: modelId, version: '2.6.0', image }));
    const second = await postUpload(agent.post('/api/releases').set(csrf), signedUpload(key, { model: modelId, version: '2.6.1', image }));
    expect([first.status, second.status]).toEqual([201, 201]);
    const sha256 = crypto.createHash('sha256').update(image).digest('hex');
    expect(storeEntries(t).filter((e) => e === sha256)).toHaveLength(1);
    expect(storeEntries(t).every((e) => /^[0-9a-f]{64}$/.test(e))).toBe(true);
    const [{ n }] = await t.sequelize.query<{ n: number }>('SELECT count(*)::int AS n FROM images WHERE sha256 = :sha256', { type: QueryTypes.SELECT, replacements: { sha256 } });
    expect(n).toBe(1);
  });

  test('when the manifest and signature come as text fields and the key is ECDSA P-256, then the upload is accepted', async () => {
    const ecdsa = keyPair('ecdsa-p256-sha256');
    await registerKey(t, ecdsa, 'ECDSA build key');
    const upload = signedUpload(ecdsa, { model: modelId, version: '2.7.0' });
    const res = await (await engineer())
      .post('/api/releases')
      .set(csrf)
      .attach('image', upload.image, 'fw.bin')
      .field('manifest', upload.manifest.toString('utf8'))
      .field('signature', `${upload.signature}\n`);
    expect(res.status).toBe(201);
    expect(res.body.key.keyId).toBe(ecdsa.keyId);
  });
});

describe('refusals store nothing', () => {
  test('when the signer is not a registered key, then 422 on signature', async () => {
    const stranger = keyPair();
    const upload = signedUpload(stranger, { model: modelId, version: '3.0.0' });
    const res = await expectRefused(async () => postUpload((await engineer()).post('/api/releases').set(csrf), upload), 422, 'signature');
    expect(res.body.detail).toMatch(/does not match .* any active signing key/);
  });

  test('when the signer is retired or revoked, then 422 says which state refuses it', async () => {
    const admin = await t.signedIn('admin');
    for (const move of ['retire', 'revoke'] as const) {
      const k = keyPair();
      const id = await registerKey(t, k, `To ${move}`);
      expect((await admin.post(`/api/keys/${id}/${move}`).set(csrf)).status).toBe(200);
      const upload = signedUpload(k, { model: modelId, version: '3.0.0' });
      const res = await expectRefused(async () => postUpload((await engineer()).post('/api/releases').set(csrf), upload), 422, 'signature');
      expect(res.body.detail).toContain(move === 'retire' ? 'retired' : 'revoked');
    }
  });

  test('when the signature has the wrong length or is not base64, then 400 on signature', async () => {
    const upload = signedUpload(key, { model: modelId, version: '3.0.0' });
    // RFC 8032 §5.1.6: an Ed25519 signature is 64 bytes; 63 is wrong.
    const short = { ...upload, signature: Buffer.from(upload.signature, 'base64').subarray(0, 63).toString('base64') };
    const res = await expectRefused(async () => postUpload((await engineer()).post('/api/releases').set(csrf), short), 400, 'signature');
    expect(res.body.detail).toMatch(/64 bytes/);
    const notBase64 = { ...upload, signature: '%%%not base64%%%' };
    await expectRefused(async () => postUpload((await engineer()).post('/api/releases').set(csrf), notBase64), 400, 'signature');
    const base64url = { ...upload, signature: Buffer.from(upload.signature, 'base64').toString('base64url') };
    await expectRefused(async () => postUpload((await engineer()).post('/api/releases').set(csrf), base64url), 400, 'signature');
  });

  test('when the manifest is not in RFC 8785 canonical form (even if correctly signed), then 400 on manifest', async () => {
    const upload = signedUpload(key, { model: modelId, version: '3.0.0' });
    const pretty = Buffer.from(JSON.stringify(upload.fields, null, 2), 'utf8');
    const res = await expectRefused(
      async () => postUpload((await engineer()).post('/api/releases').set(csrf), { ...upload, manifest: pretty, signature: signBytes(pretty, key) }),
      400,
      'manifest',
    );
    expect(res.body.detail).toMatch(/canonical/);
  });

  test.each(['v2.4.0', '01.2.3', '2.4', '2.4.0 ', '1.0.0-01'])('when the manifest version is %j (not semver.org 2.0.0), then 400 on manifest.version', async (version) => {
    const upload = signedUpload(key, { model: modelId, version });
    await expectRefused(async () => postUpload((await engineer()).post('/api/releases').set(csrf), upload), 400, 'manifest.version');
  });

  test('when the image is not the one the manifest describes (bytes or size), then 422 on image', async () => {
    const upload = signedUpload(key, { model: modelId, version: '3.0.0' });
    const otherBytes = { ...upload, image: crypto.randomBytes(upload.image.length) };
    const res = await expectRefused(async () => postUpload((await engineer()).post('/api/releases').set(csrf), otherBytes), 422, 'image');
    expect(res.body.detail).toMatch(/SHA-256/);
    const longer = { ...upload, image: Buffer.concat([upload.image, Buffer.from([0])]) };
    const res2 = await expectRefused(async () => postUpload((await engineer()).post('/api/releases').set(csrf), longer), 422, 'image');
    expect(res2.body.detail).toMatch(/bytes but the manifest says/);
  });

  test('when the model is unknown or a board revision does not exist for it, then 422 naming the manifest field', async () => {
    const unknownModel = signedUpload(key, { model: crypto.randomUUID(), version: '3.0.0' });
    await expectRefused(async () => postUpload((await engineer()).post('/api/releases').set(csrf), unknownModel), 422, 'manifest.model');
    const unknownBoard = signedUpload(key, { model: modelId, version: '3.0.0', boards: ['B', 'D'] });
    const res = await expectRefused(async () => postUpload((await engineer()).post('/api/releases').set(csrf), unknownBoard), 422, 'manifest.board_revisions');
    expect(res.body.detail).toContain('D');
  });

  test('when the version already exists for the model (also with other build metadata), then 409 on manifest.version', async () => {
    const agent = await engineer();
    expect((await postUpload(agent.post('/api/releases').set(csrf), signedUpload(key, { model: modelId, version: '2.8.0' }))).status).toBe(201);
    await expectRefused(async () => postUpload(agent.post('/api/releases').set(csrf), signedUpload(key, { model: modelId, version: '2.8.0' })), 409, 'manifest.version');
    // semver.org §10: build metadata does not count in precedence.
    await expectRefused(async () => postUpload(agent.post('/api/releases').set(csrf), signedUpload(key, { model: modelId, version: '2.8.0+build.7' })), 409, 'manifest.version');
  });

  test('when the security counter is below the highest published one, then 422; drafts do not raise the bar', async () => {
    const agent = await engineer();
    const published = await postUpload(agent.post('/api/releases').set(csrf), signedUpload(key, { model: modelId, version: '4.0.0', counter: 7 }));
    expect(published.status).toBe(201);
    expect((await agent.post(`/api/releases/${published.body.id}/transitions`).set(csrf).send({ action: 'start_pilot' })).status).toBe(200);
    const draft = await postUpload(agent.post('/api/releases').set(csrf), signedUpload(key, { model: modelId, version: '4.1.0', counter: 12 }));
    expect(draft.status).toBe(201);
    const res = await expectRefused(
      async () => postUpload(agent.post('/api/releases').set(csrf), signedUpload(key, { model: modelId, version: '4.2.0', counter: 6 })),
      422,
      'manifest.security_counter',
    );
    expect(res.body.detail).toContain('7');
    const equal = await postUpload(agent.post('/api/releases').set(csrf), signedUpload(key, { model: modelId, version: '4.2.0', counter: 7 }));
    expect(equal.status).toBe(201);
  });

  test('when a part is missing, then 400 names each missing part', async () => {
    const upload = signedUpload(key, { model: modelId, version: '3.0.0' });
    const res = await expectRefused(async () => (await engineer()).post('/api/releases').set(csrf).field('signature', upload.signature), 400, null);
    expect(res.body.errors.map((e: { path: string }) => e.path)).toEqual(['image', 'manifest']);
    const json = await expectRefused(async () => (await engineer()).post('/api/releases').set(csrf).send({ signature: upload.signature }), 400, null);
    expect(json.body.errors.map((e: { path: string }) => e.path)).toEqual(['image', 'manifest']);
  });

  test('when an unknown file part, a second image or a bad channel arrives, then 400', async () => {
    const upload = signedUpload(key, { model: modelId, version: '3.0.0' });
    await expectRefused(async () => postUpload((await engineer()).post('/api/releases').set(csrf), upload).attach('extra', Buffer.from('x'), 'x.bin'), 400, 'extra');
    await expectRefused(async () => postUpload((await engineer()).post('/api/releases').set(csrf), upload).attach('image', upload.image, 'again.bin'), 400, 'image');
    await expectRefused(async () => postUpload((await engineer()).post('/api/releases').set(csrf), upload, { channel: 'beta' }), 400, 'channel');
  });

  test('when the image is larger than the limit (16 MiB), then 413', async () => {
    const image = Buffer.alloc(16 * 1024 * 1024 + 1, 7);
    const upload = signedUpload(key, { model: modelId, version: '3.0.0', image });
    const res = await expectRefused(async () => postUpload((await engineer()).post('/api/releases').set(csrf), upload), 413, null);
    expect(res.body.detail).toContain('image');
  });

  test('when the multipart body is cut short, then 400 and no temporary file remains', async () => {
    const boundary = 'heliodorBoundary';
    const body = `--${boundary}\r\nContent-Disposition: form-data; name="image"; filename="fw.bin"\r\nContent-Type: application/octet-stream\r\n\r\n${'x'.repeat(50_000)}`;
    const res = await expectRefused(
      async () => (await engineer()).post('/api/releases').set(csrf).set('Content-Type', `multipart/form-data; boundary=${boundary}`).send(body),
      400,
      null,
    );
    expect(res.body.detail).toMatch(/cut short|not valid multipart/);
  });

  test('when the connection drops in the middle of the image, then the temporary file is removed and no row is written', async () => {
    const base = await t.listen();
    await engineer(); // creates the person
    const signIn = await request(base).post('/api/auth/sign-in').send({ email: 'priya.test@test.example', password: 'correct horse battery' });
    const cookie = String(signIn.headers['set-cookie']).split(';')[0];
    const releases = await tableCount(t, 'releases');
    const before = storeEntries(t);
    const boundary = 'heliodorBoundary';
    const url = new URL(`${base}/api/releases`);
    let midway: string[] = [];
    await new Promise<void>((resolve) => {
      const req = http.request(url, {
        method: 'POST',
        headers: { Cookie: cookie, 'X-Requested-With': 'heliodor', 'Content-Type': `multipart/form-data; boundary=${boundary}`, 'Content-Length': 10_000_000 },
      });
      req.on('error', () => resolve());
      req.write(`--${boundary}\r\nContent-Disposition: form-data; name="image"; filename="fw.bin"\r\nContent-Type: application/octet-stream\r\n\r\n`);
      req.write(crypto.randomBytes(300_000), () => {
        // Give the server time to create the temporary file, then drop the connection.
        setTimeout(() => {
          midway = storeEntries(t);
          req.destroy();
          resolve();
        }, 300);
      });
    });
    // The image was being streamed into a temporary file inside the store…
    expect(midway.filter((e) => !before.includes(e))).toEqual([expect.stringMatching(/^\.incoming-/)]);
    // …which is gone once the server noticed the dropped connection.
    let entries = storeEntries(t);
    for (let i = 0; i < 50 && entries.length !== before.length; i += 1) {
      await new Promise((r) => setTimeout(r, 50));
      entries = storeEntries(t);
    }
    expect(entries).toEqual(before);
    expect(await tableCount(t, 'releases')).toBe(releases);
  });

  test('when an integrator, a support person or a fleet:read token uploads, then 403 and nothing is stored', async () => {
    const upload = signedUpload(key, { model: modelId, version: '3.0.0', image: crypto.randomBytes(256) });
    await expectRefused(async () => postUpload((await t.signedIn('integrator')).post('/api/releases').set(csrf), upload), 403, null);
    await expectRefused(async () => postUpload((await t.signedIn('support')).post('/api/releases').set(csrf), upload), 403, null);
    const admin = await t.signedIn('admin');
    const token = (await admin.post('/api/tokens').set(csrf).send({ name: 'Reader', scopes: ['fleet:read'], expiresAt: '2099-01-01T00:00:00Z' })).body.token;
    await expectRefused(async () => postUpload(request(t.app).post('/api/releases').set('Authorization', `Bearer ${token}`), upload), 403, null);
  });
});
