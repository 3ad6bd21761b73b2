// Key rotation that loggers follow: a model's trust set moves through three rotations in the console
// (a key added, the threshold raised to 2, the first key revoked), each signed by the keys of the
// version before; a logger of the reference client (scripts/simulator/logger.ts) that slept through all
// three catches up one version per check-in and never accepts a set signed by a revoked key alone.
// Keys are the RFC 8032 §7.1 TEST 1 and TEST 2 keys (docs/SOURCES.md §1, [V]); the rotation rules are
// TUF's (docs/SOURCES.md §6): the next version is signed by the threshold of the current one, each key
// counted once, and a client steps through every version in turn.
import crypto from 'node:crypto';
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { CHECK_IN, bearer, checkInBody, createFleet, type Fleet } from './device-fixtures';
import { VirtualLogger, type LoggerEvent } from '../../scripts/simulator/logger';
import { seededRandom } from '../../scripts/simulator/random';
import { parsePublicKeyPem } from '../../server/images/manifest';
import { trustKeyOf, trustSetBytes, trustSetBodySchema, type TrustSetBody } from '../../server/images/trust';
import { ed25519PrivatePem, ed25519Spki, rfc8032, spkiPem } from '../helpers/vectors';
import { Activity, SigningKey } from '../../server/db/models';

let t: TestApp;
let fleet: Fleet;
let baseUrl: string;
beforeAll(async () => {
  t = await startTestApp();
  fleet = await createFleet(t);
  baseUrl = await t.listen();
});
afterAll(() => t.close());

const A = { vector: rfc8032[0], pem: spkiPem(ed25519Spki(rfc8032[0].publicKey)), privatePem: ed25519PrivatePem(rfc8032[0]) };
const B = { vector: rfc8032[1], pem: spkiPem(ed25519Spki(rfc8032[1].publicKey)), privatePem: ed25519PrivatePem(rfc8032[1]) };
type Signer = typeof A;

const sig = (bytes: Buffer, s: Signer) => crypto.sign(null, bytes, s.privatePem).toString('base64');

let adminAgent: Awaited<ReturnType<TestApp['signedIn']>> | undefined;
const admin = async () => (adminAgent ??= await t.signedIn('admin', 'Morgan Test'));
let engineerAgent: Awaited<ReturnType<TestApp['signedIn']>> | undefined;
const engineer = async () => (engineerAgent ??= await t.signedIn('release_engineer', 'Priya Test'));

async function trust() {
  const res = await (await engineer()).get(`/api/models/${fleet.model.id}/trust`);
  expect(res.status).toBe(200);
  return res.body as { current: { version: number; canonical: string } | null; pending: { version: number; canonical: string; needs: number; signedBy: unknown[] } | null };
}

async function signPending(...signers: Signer[]) {
  const pending = (await trust()).pending!;
  const bytes = Buffer.from(pending.canonical, 'utf8');
  let last;
  for (const s of signers) {
    last = await (await engineer())
      .post(`/api/models/${fleet.model.id}/trust/signatures`)
      .set(csrf)
      .send({ version: pending.version, keyId: s.vector.keyId, algorithm: 'ed25519', signature: sig(bytes, s) });
    expect(last.status).toBe(200);
  }
  return last!.body;
}

const bodyOf = (canonical: string): TrustSetBody => trustSetBodySchema.parse(JSON.parse(canonical));

describe('three rotations of a trust set, and a logger that slept through them', () => {
  let v1: TrustSetBody;
  let keyAId: string;

  test('when the first key is registered, then the model gets version 1 (the set its loggers are made with), signed by nobody', async () => {
    const res = await (await admin()).post('/api/keys').set(csrf).send({ name: 'Key A (RFC 8032 TEST 1)', publicKeyPem: A.pem });
    expect(res.status).toBe(201);
    keyAId = res.body.id;
    const view = await trust();
    expect(view.pending).toBeNull();
    v1 = bodyOf(view.current!.canonical);
    expect(v1).toMatchObject({ version: 1, threshold: 1 });
    expect(v1.keys.map((k) => k.key_id).sort()).toEqual([A.vector.keyId, fleet.key.keyId].sort());
  });

  test('when three rotations are made and each is signed by the threshold of the version before, then version 4 is current', async () => {
    // Rotation 1: key B joins. Pending until signed: a check-in on version 1 gets nothing yet.
    expect((await (await admin()).post('/api/keys').set(csrf).send({ name: 'Key B (RFC 8032 TEST 2)', publicKeyPem: B.pem })).status).toBe(201);
    const waiting = await trust();
    expect(waiting.pending).toMatchObject({ version: 2, needs: 1, signedBy: [] });
    const lg = await fleet.logger({ board: 'B' });
    const early = await t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('2.3.1', { trust_version: 1 }));
    expect(early.status).toBe(200);
    expect(early.body.trust_set).toBeUndefined();
    // A key outside version 1 cannot vouch for version 2.
    const pending2 = Buffer.from(waiting.pending!.canonical, 'utf8');
    const outsider = await (await engineer())
      .post(`/api/models/${fleet.model.id}/trust/signatures`)
      .set(csrf)
      .send({ version: 2, keyId: B.vector.keyId, algorithm: 'ed25519', signature: sig(pending2, B) });
    expect(outsider.status).toBe(422);
    expect((await signPending(A)).current.version).toBe(2);

    // Rotation 2: the model's rule becomes 2 of the registered keys (an admin, with an activity row).
    const patch = await (await admin()).patch(`/api/models/${fleet.model.id}`).set(csrf).send({ signingThreshold: 2 });
    expect(patch.status).toBe(200);
    expect(patch.body.signingThreshold).toBe(2);
    expect(await Activity.count({ where: { targetId: fleet.model.id, action: 'model.signing_threshold_changed' } })).toBe(1);
    expect((await trust()).pending).toMatchObject({ version: 3, needs: 1 });
    expect((await signPending(A)).current).toMatchObject({ version: 3, threshold: 2 });

    // Rotation 3: key A is revoked; version 4 needs two keys of version 3 — A may sign its own removal.
    expect((await (await admin()).post(`/api/keys/${keyAId}/revoke`).set(csrf)).status).toBe(200);
    const third = await trust();
    expect(third.pending).toMatchObject({ version: 4, needs: 2 });
    // One key twice is still one signature (TUF counts distinct key ids, docs/SOURCES.md §6).
    const once = await signPending(B);
    expect(once.pending.signedBy).toHaveLength(1);
    const twice = await signPending(B);
    expect(twice.pending.signedBy).toHaveLength(1);
    expect(twice.current.version).toBe(3);
    const done = await signPending(A);
    expect(done.pending).toBeNull();
    expect(done.current.version).toBe(4);
    expect(bodyOf(done.current.canonical).keys.map((k: { key_id: string }) => k.key_id).sort()).toEqual([B.vector.keyId, fleet.key.keyId].sort());
  });

  test('when a logger that holds version 1 checks in after all three, then it steps 2, 3, 4 one check-in at a time and installs a release signed 2 of 2', async () => {
    // The release is signed by the fleet key and by B: version 4's two keys.
    const draft = await fleet.release({ version: '2.4.0', state: 'draft' });
    const added = await (await engineer())
      .post(`/api/releases/${draft.id}/signatures`)
      .set(csrf)
      .send({ keyId: B.vector.keyId, algorithm: 'ed25519', signature: sig(draft.manifest, B) });
    expect(added.status).toBe(200);
    expect(added.body.signing).toMatchObject({ threshold: 2, met: true });
    for (const action of ['start_pilot', 'complete']) {
      expect((await (await engineer()).post(`/api/releases/${draft.id}/transitions`).set(csrf).send({ action })).status).toBe(200);
    }

    const lg = await fleet.logger({ board: 'B' });
    const events: LoggerEvent[] = [];
    let clock = new Date();
    const logger = new VirtualLogger(
      { serial: lg.serial, token: lg.token, board: 'B', firmware: '2.3.1', securityCounter: 1, modelId: fleet.model.id },
      { baseUrl, clock: () => clock, random: seededRandom(20261203), trustedKeys: [], trustSet: v1, onEvent: (e) => events.push(e) },
    );
    let outcome = null;
    for (let i = 0; i < 12 && outcome === null; i++) {
      outcome = await logger.cycle(clock);
      clock = new Date(logger.nextCheckInAt.getTime());
    }
    const steps = events.filter((e) => e.kind === 'trust');
    expect(steps.map((e) => (e.kind === 'trust' ? [e.version, e.accepted] : null))).toEqual([
      [2, true],
      [3, true],
      [4, true],
    ]);
    expect(logger.trust).toMatchObject({ version: 4, threshold: 2 });
    expect(outcome).toEqual({ state: 'installed' });

    // A check-in on the newest version brings no set.
    const quiet = await t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('2.4.0', { trust_version: 4 }));
    expect(quiet.body.trust_set).toBeUndefined();
  });

  test('when a set signed by the revoked key alone is sent, then a logger on version 3 or 4 refuses it, and refuses a release signed by that key alone', async () => {
    const at = (set: TrustSetBody) =>
      new VirtualLogger({ serial: 'FL2-FORGE', token: 'hlt_x', board: 'B', firmware: '2.3.1' }, { baseUrl, clock: () => new Date(), random: seededRandom(1), trustedKeys: [], trustSet: set });
    const view = await trust();
    const v4 = bodyOf(view.current!.canonical);
    const v3: TrustSetBody = { ...v4, version: 3, threshold: 2, keys: [...v4.keys, trustKeyOf(parsePublicKeyPem(A.pem))] };
    // A forged version 4 keeping A, and a forged version 5 bringing A back, each signed by A alone.
    const forged4: TrustSetBody = { ...v3, version: 4, threshold: 1 };
    const forged5: TrustSetBody = { ...v4, version: 5, threshold: 1, keys: [trustKeyOf(parsePublicKeyPem(A.pem))] };
    const signedByA = (body: TrustSetBody) => ({ ...body, signatures: [{ key_id: A.vector.keyId, algorithm: 'ed25519', signature: sig(trustSetBytes(body), A) }] });
    const on3 = at(v3);
    expect(on3.followTrustSet(signedByA(forged4))).toBe(false);
    expect(on3.refusedTrustSets[0].detail).toMatch(/signed by 1 of the 2 keys of version 3/);
    const on4 = at(v4);
    expect(on4.followTrustSet(signedByA(forged5))).toBe(false);
    expect(on4.trust).toEqual(v4);

    // A manifest signed by A alone is refused by the logger's threshold rule.
    const image = crypto.randomBytes(2048);
    const manifest = Buffer.from(
      JSON.stringify({
        board_revisions: ['B'],
        format: 1,
        image_sha256: crypto.createHash('sha256').update(image).digest('hex'),
        image_size: image.length,
        issued_at: '2026-11-30T10:00:00Z',
        model: fleet.model.id,
        security_counter: 9,
        version: '9.0.0',
      }),
    );
    const offer = {
      release: crypto.randomUUID(),
      version: '9.0.0',
      security_counter: 9,
      manifest: manifest.toString('base64'),
      signature: sig(manifest, A),
      key_id: A.vector.keyId,
      algorithm: 'ed25519' as const,
      image: { url: '/x', sha256: crypto.createHash('sha256').update(image).digest('hex'), size: image.length },
    };
    expect(on4.verify(offer, image)).toMatchObject({ ok: false, reason: 'signature' });
    expect((await SigningKey.findOne({ where: { keyId: A.vector.keyId } }))?.state).toBe('revoked');
  });
});
