// Releases signed by more than one key: the model's signing rule (k of n registered keys, changed only by
// an admin), signatures at upload and gathered on a draft, the start_pilot guard, the offer's signature
// list, manifest expiry at upload, in the offer decision and on re-signing. Keys are the RFC 8032 §7.1
// TEST 1–3 keys (docs/SOURCES.md §1, [V]) and the RFC 6979 A.2.5 P-256 key (docs/SOURCES.md §2, [V]);
// signatures are made by node:crypto directly, not by the module under test.
import crypto from 'node:crypto';
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { Activity, Release } from '../../server/db/models';
import { demoModel, postUpload, signedUpload, type KeyPair, type ManifestFields } from './release-fixtures';
import { CHECK_IN, bearer, checkInBody, createFleet } from './device-fixtures';
import { ed25519PrivatePem, ed25519Spki, p256PrivatePem, p256PublicPem, rfc8032, spkiPem } from '../helpers/vectors';
import canonicalize from 'canonicalize';

const vectorKey = (i: number): KeyPair => ({ algorithm: 'ed25519', privatePem: ed25519PrivatePem(rfc8032[i]), publicPem: spkiPem(ed25519Spki(rfc8032[i].publicKey)), keyId: rfc8032[i].keyId });
const [A, B, C] = [0, 1, 2].map(vectorKey);
const P: KeyPair = { algorithm: 'ecdsa-p256-sha256', privatePem: p256PrivatePem, publicPem: p256PublicPem, keyId: '5a7a78cca4a0f420' };

const sign = (bytes: Buffer, key: KeyPair) =>
  (key.algorithm === 'ed25519' ? crypto.sign(null, bytes, key.privatePem) : crypto.sign('sha256', bytes, { key: key.privatePem, dsaEncoding: 'ieee-p1363' })).toString('base64');

let t: TestApp;
let modelId: string;
let versionNo = 0;
let adminAgent: Awaited<ReturnType<TestApp['signedIn']>> | undefined;
const admin = async () => (adminAgent ??= await t.signedIn('admin', 'Morgan Test'));
let engineerAgent: Awaited<ReturnType<TestApp['signedIn']>> | undefined;
const engineer = async () => (engineerAgent ??= await t.signedIn('release_engineer', 'Priya Test'));

beforeAll(async () => {
  t = await startTestApp({ seed: 'demo' });
  modelId = (await demoModel()).id;
  for (const [key, name] of [[A, 'Key A'], [B, 'Key B'], [C, 'Key C'], [P, 'Key P-256']] as const) {
    const res = await (await admin()).post('/api/keys').set(csrf).send({ name, publicKeyPem: key.publicPem });
    if (res.status !== 201) throw new Error(`key registration failed: ${JSON.stringify(res.body)}`);
  }
});
afterAll(() => t.close());

const DAY = 24 * 3600 * 1000;
const rfc3339 = (ms: number) => new Date(ms).toISOString().replace(/\.\d{3}Z$/, 'Z');

/** An upload signed by each of `signers` (several `signature` fields). */
async function upload(signers: KeyPair[], override: Partial<ManifestFields> & { expires?: string } = {}) {
  versionNo += 1;
  const u = signedUpload(signers[0], { model: modelId, version: `7.${versionNo}.0`, override: override as Partial<ManifestFields> });
  let req = postUpload((await engineer()).post('/api/releases').set(csrf), u);
  for (const more of signers.slice(1)) req = req.field('signature', sign(u.manifest, more));
  return { res: await req, upload: u };
}

const addSignature = async (id: string, key: KeyPair, bytes: Buffer) =>
  (await engineer()).post(`/api/releases/${id}/signatures`).set(csrf).send({ keyId: key.keyId, algorithm: key.algorithm, signature: sign(bytes, key) });

describe('the signing rule of a model', () => {
  test('when an admin sets 2 of the registered keys, then it is kept with an activity row; more than the unrevoked keys is refused; an engineer may not', async () => {
    const tooMany = await (await admin()).patch(`/api/models/${modelId}`).set(csrf).send({ signingThreshold: 9 });
    expect(tooMany.status).toBe(422);
    expect(tooMany.body.errors[0].path).toBe('signingThreshold');
    expect((await (await engineer()).patch(`/api/models/${modelId}`).set(csrf).send({ signingThreshold: 2 })).status).toBe(403);
    const res = await (await admin()).patch(`/api/models/${modelId}`).set(csrf).send({ signingThreshold: 2 });
    expect(res.status).toBe(200);
    expect(res.body.signingThreshold).toBe(2);
    expect(await Activity.count({ where: { targetId: modelId, action: 'model.signing_threshold_changed' } })).toBe(1);
  });

  test('when a draft has one signature of 2, then its pilot is refused with the keys missing, and a second key lets it start', async () => {
    const { res, upload: u } = await upload([A]);
    expect(res.status).toBe(201);
    expect(res.body.signing).toMatchObject({ threshold: 2, met: false, signedBy: [{ keyId: A.keyId }] });
    expect(res.body.can.start_pilot).toBe(false);
    const refused = await (await engineer()).post(`/api/releases/${res.body.id}/transitions`).set(csrf).send({ action: 'start_pilot' });
    expect(refused.status).toBe(409);
    expect(refused.body.detail).toMatch(/needs signatures by 2 distinct registered keys/);
    expect(refused.body.detail).toContain(B.keyId);

    // The same key again counts once (TUF counts a threshold in distinct key ids, docs/SOURCES.md §6).
    const again = await addSignature(res.body.id, A, u.manifest);
    expect(again.status).toBe(200);
    expect(again.body.signing).toMatchObject({ met: false, signedBy: [{ keyId: A.keyId }] });

    const second = await addSignature(res.body.id, P, u.manifest);
    expect(second.status).toBe(200);
    expect(second.body.signing.signedBy.map((k: { keyId: string }) => k.keyId)).toEqual([A.keyId, P.keyId]);
    expect(second.body.signing.met).toBe(true);
    expect((await (await engineer()).post(`/api/releases/${res.body.id}/transitions`).set(csrf).send({ action: 'start_pilot' })).status).toBe(200);
    // Signatures are gathered on drafts only.
    expect((await addSignature(res.body.id, C, u.manifest)).status).toBe(409);
  });

  test('when an upload carries two signatures, then the rule is met at once; a signature that does not verify is refused with nothing stored', async () => {
    const { res } = await upload([B, C]);
    expect(res.status).toBe(201);
    expect(res.body.signing).toMatchObject({ met: true });
    const before = await Release.count();
    versionNo += 1;
    const u = signedUpload(A, { model: modelId, version: `7.${versionNo}.0` });
    const bad = await postUpload((await engineer()).post('/api/releases').set(csrf), u).field('signature', sign(Buffer.from('other bytes'), B));
    expect(bad.status).toBe(422);
    expect(await Release.count()).toBe(before);
  });

  test('when a signature names an unknown key, or does not verify, then POST signatures answers 422 and nothing changes', async () => {
    const { res, upload: u } = await upload([A]);
    const stranger = await (await engineer())
      .post(`/api/releases/${res.body.id}/signatures`)
      .set(csrf)
      .send({ keyId: '0123456789abcdef', algorithm: 'ed25519', signature: sign(u.manifest, A) });
    expect(stranger.status).toBe(422);
    const wrong = await addSignature(res.body.id, B, Buffer.from('not the manifest'));
    expect(wrong.status).toBe(422);
    expect((await (await engineer()).get(`/api/releases/${res.body.id}`)).body.signing.signedBy).toHaveLength(1);
  });
});

describe('manifests that expire', () => {
  test('when a manifest has expired or expires within 24 hours, then the upload is refused; 30 days ahead is kept as expiresAt', async () => {
    const now = Date.now();
    const past = await upload([A, B], { expires: rfc3339(now - 60_000) });
    expect(past.res.status).toBe(422);
    expect(past.res.body.errors[0].path).toBe('manifest.expires');
    const soon = await upload([A, B], { expires: rfc3339(now + 23 * 3600 * 1000) });
    expect(soon.res.status).toBe(422);
    const later = rfc3339(now + 30 * DAY);
    const ok = await upload([A, B], { expires: later });
    expect(ok.res.status).toBe(201);
    expect(ok.res.body.expiresAt).toBe(new Date(later).toISOString());
  });

  test('when a live release is signed anew with a later expiry, then it keeps its id and history; an earlier expiry or another version is refused', async () => {
    const now = Date.now();
    const { res, upload: u } = await upload([A, B], { expires: rfc3339(now + 10 * DAY) });
    const id = res.body.id;
    expect((await (await engineer()).post(`/api/releases/${id}/transitions`).set(csrf).send({ action: 'start_pilot' })).status).toBe(200);
    const renewed = { ...u.fields, expires: rfc3339(now + 90 * DAY), issued_at: rfc3339(now) };
    const text = canonicalize(renewed) as string;
    const bytes = Buffer.from(text, 'utf8');
    const signatures = (keys: KeyPair[], b = bytes) => keys.map((k) => ({ keyId: k.keyId, algorithm: k.algorithm, signature: sign(b, k) }));
    const one = await (await engineer()).put(`/api/releases/${id}/manifest`).set(csrf).send({ manifest: text, signatures: signatures([A]) });
    expect(one.status).toBe(422); // a live release needs its rule met at once
    const put = await (await engineer()).put(`/api/releases/${id}/manifest`).set(csrf).send({ manifest: text, signatures: signatures([B, C]) });
    expect(put.status).toBe(200);
    expect(put.body).toMatchObject({ id, state: 'pilot', expiresAt: new Date(renewed.expires).toISOString() });
    expect(put.body.history.map((h: { action: string }) => h.action)).toEqual(['upload', 'start_pilot']);
    expect(put.body.signing.signedBy.map((k: { keyId: string }) => k.keyId)).toEqual([B.keyId, C.keyId]);
    const earlier = canonicalize({ ...renewed, expires: rfc3339(now + 20 * DAY) }) as string;
    expect((await (await engineer()).put(`/api/releases/${id}/manifest`).set(csrf).send({ manifest: earlier, signatures: signatures([B, C], Buffer.from(earlier)) })).status).toBe(422);
    const other = canonicalize({ ...renewed, version: '99.0.0', expires: rfc3339(now + 120 * DAY) }) as string;
    expect((await (await engineer()).put(`/api/releases/${id}/manifest`).set(csrf).send({ manifest: other, signatures: signatures([B, C], Buffer.from(other)) })).status).toBe(422);
  });
});

describe('the offer', () => {
  test('when a release has two signatures, then the offer lists both and its single fields hold the first; past its expiry nothing is offered (manifest_expired)', async () => {
    const fleet = await createFleet(t);
    const release = await fleet.release({ version: '2.4.0' });
    await t.sequelize.query(
      `INSERT INTO release_signatures (release_id, signing_key_id, signature) SELECT :id, k.id, :sig FROM signing_keys k WHERE k.key_id = :keyId`,
      { replacements: { id: release.id, keyId: B.keyId, sig: Buffer.from(sign(release.manifest, B), 'base64') } },
    );
    const lg = await fleet.logger({ board: 'B' });
    const res = await t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('2.3.1'));
    expect(res.status).toBe(200);
    expect(res.body.offer.signatures).toEqual([
      { key_id: fleet.key.keyId, algorithm: 'ed25519', signature: release.signature.toString('base64') },
      { key_id: B.keyId, algorithm: 'ed25519', signature: sign(release.manifest, B) },
    ]);
    expect(res.body.offer).toMatchObject({ key_id: fleet.key.keyId, signature: release.signature.toString('base64'), algorithm: 'ed25519' });

    await Release.update({ expiresAt: new Date(Date.now() - 1000) }, { where: { id: release.id }, individualHooks: true });
    const after = await t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('2.3.1'));
    expect(after.body.offer).toBeNull();
    const why = await (await engineer()).get(`/api/loggers/${lg.id}/why`);
    expect(why.body.verdicts.find((v: { releaseId: string }) => v.releaseId === release.id)).toMatchObject({ reason: 'manifest_expired' });
  });
});
