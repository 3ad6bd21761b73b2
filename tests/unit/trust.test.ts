// The threshold rule and the trust-set acceptance rule (server/images/trust.ts), shared by the console
// and the reference client. Keys and signatures come from published vectors: the RFC 8032 §7.1 Ed25519
// TEST 1–3 keys (docs/SOURCES.md §1, [V]; Ed25519 is deterministic, so each vector key signs our bytes
// reproducibly) and the RFC 6979 A.2.5 ECDSA P-256 key (docs/SOURCES.md §2, [V]). Each signature is
// also checked by node:crypto directly, a second implementation beside the module under test.
import { createPublicKey, sign, verify } from 'node:crypto';
import { parsePublicKeyPem, type SigningPublicKey } from '../../server/images/manifest';
import {
  acceptTrustSet,
  hasExpired,
  judgeThreshold,
  trustKeyOf,
  trustSetBytes,
  type TrustSetBody,
  type WireSignature,
} from '../../server/images/trust';
import { ed25519PrivatePem, ed25519Spki, p256PrivatePem, p256PublicPem, rfc8032, spkiPem } from '../helpers/vectors';

type Signer = { name: string; key: SigningPublicKey; privatePem: string };
const ed = rfc8032.map<Signer>((v) => ({ name: v.name, key: parsePublicKeyPem(spkiPem(ed25519Spki(v.publicKey))), privatePem: ed25519PrivatePem(v) }));
const ec: Signer = { name: 'RFC 6979 P-256', key: parsePublicKeyPem(p256PublicPem), privatePem: p256PrivatePem };
const [A, B, C] = ed;

/** Signs with node:crypto directly (not the module under test), and checks it with node:crypto too. */
function signed(bytes: Buffer, s: Signer): WireSignature {
  const sig = s.key.algorithm === 'ed25519' ? sign(null, bytes, s.privatePem) : sign('sha256', bytes, { key: s.privatePem, dsaEncoding: 'ieee-p1363' });
  const pub = createPublicKey(s.key.pem);
  expect(s.key.algorithm === 'ed25519' ? verify(null, bytes, pub, sig) : verify('sha256', bytes, { key: pub, dsaEncoding: 'ieee-p1363' }, sig)).toBe(true);
  return { key_id: s.key.keyId, algorithm: s.key.algorithm, signature: sig.toString('base64') };
}

const manifest = Buffer.from('{"board_revisions":["B"],"format":1,"image_sha256":"' + 'a'.repeat(64) + '","image_size":1,"issued_at":"2026-11-30T10:00:00Z","model":"m","security_counter":1,"version":"2.4.0"}');

describe('the threshold rule', () => {
  test('when the RFC 8032 TEST keys have the key ids openssl computes, then the multi-signature cases below sign as those keys (docs/SOURCES.md §1)', () => {
    expect(ed.map((s) => s.key.keyId)).toEqual(rfc8032.map((v) => v.keyId));
    expect(ec.key.keyId).toBe('5a7a78cca4a0f420'); // docs/SOURCES.md §2, the openssl literal in tests/unit/signatures.test.ts
  });

  // Every subset of three signers against every threshold 1–3 of the keys {A, B, C}: met exactly when the
  // subset has at least k members.
  const subsets = [[], [A], [B], [C], [A, B], [A, C], [B, C], [A, B, C]];
  const cases = subsets.flatMap((subset) => [1, 2, 3].map((k) => ({ names: subset.map((s) => s.name).join('+') || 'nobody', subset, k })));
  test.each(cases)('when $names sign and the rule is $k of 3, then it is met only with at least $k distinct signers', ({ subset, k }) => {
    const verdict = judgeThreshold(manifest, subset.map((s) => signed(manifest, s)), [A.key, B.key, C.key], k);
    expect(verdict.met).toBe(subset.length >= k);
    expect(verdict.signedBy).toEqual(subset.map((s) => s.key.keyId));
    expect(verdict.missing).toEqual([A, B, C].filter((s) => !subset.includes(s)).map((s) => s.key.keyId));
  });

  test('when one key signs twice, then it counts once: a threshold counts distinct key ids (TUF, docs/SOURCES.md §6)', () => {
    const twice = [signed(manifest, A), signed(manifest, A)];
    expect(judgeThreshold(manifest, twice, [A.key, B.key], 2)).toMatchObject({ met: false, signedBy: [A.key.keyId] });
    expect(judgeThreshold(manifest, [...twice, signed(manifest, B)], [A.key, B.key], 2)).toMatchObject({ met: true, signedBy: [A.key.keyId, B.key.keyId] });
  });

  test('when an Ed25519 and an ECDSA P-256 key sign, then both count toward 2 of 2 (RFC 8032 and RFC 6979 keys)', () => {
    expect(judgeThreshold(manifest, [signed(manifest, A), signed(manifest, ec)], [A.key, ec.key], 2).met).toBe(true);
  });

  test('when a key outside the set signs, then it counts for nothing and is named', () => {
    const verdict = judgeThreshold(manifest, [signed(manifest, C)], [A.key, B.key], 1);
    expect(verdict).toMatchObject({ met: false, signedBy: [], rejected: [{ keyId: C.key.keyId, why: 'not a trusted key' }] });
  });

  test('when a signature is over other bytes, names the wrong algorithm or is not base64, then it does not count', () => {
    const other = signed(Buffer.from('other bytes'), A);
    const wrongAlgorithm = { ...signed(manifest, B), algorithm: 'ecdsa-p256-sha256' as const };
    const unreadable = { ...signed(manifest, C), signature: 'not base64!' };
    const verdict = judgeThreshold(manifest, [other, wrongAlgorithm, unreadable], [A.key, B.key, C.key], 1);
    expect(verdict.met).toBe(false);
    expect(verdict.rejected.map((r) => r.keyId)).toEqual([A.key.keyId, B.key.keyId, C.key.keyId]);
    expect(verdict.rejected[0].why).toBe('the signature does not verify');
  });

  test('when a bad signature by a key comes before its good one, then the good one still counts', () => {
    const verdict = judgeThreshold(manifest, [signed(Buffer.from('x'), A), signed(manifest, A)], [A.key], 1);
    expect(verdict).toMatchObject({ met: true, signedBy: [A.key.keyId] });
  });

  test.each([0, -1, 1.5, Number.NaN])('when the threshold is %p, then it is never met', (k) => {
    expect(judgeThreshold(manifest, [signed(manifest, A)], [A.key], k).met).toBe(false);
  });
});

// ─── Trust sets ─────────────────────────────────────────────────────────────

const MODEL = '8f14e45f-ceea-467e-a1b6-3d1f0b6b7c11';
const setOf = (version: number, threshold: number, signers: Signer[], expires = '2027-11-30T00:00:00Z'): TrustSetBody => ({
  model: MODEL,
  version,
  threshold,
  keys: signers.map((s) => trustKeyOf(s.key)),
  expires,
});
const signedBy = (body: TrustSetBody, signers: Signer[]) => ({ ...body, signatures: signers.map((s) => signed(trustSetBytes(body), s)) });

describe('the trust-set acceptance rule', () => {
  const v1 = setOf(1, 1, [A, B]);

  test('when the next version is signed by the current set threshold, then it is accepted', () => {
    const v2 = setOf(2, 1, [A, B, C]);
    expect(acceptTrustSet(v1, signedBy(v2, [A]))).toEqual({ ok: true, set: v2, signedBy: [A.key.keyId] });
  });

  test('when the canonical bytes are formed, then they are RFC 8785 JSON of the set without signatures, keys by key id', () => {
    const body = setOf(2, 1, [C, A]);
    const text = trustSetBytes(body).toString('utf8');
    // RFC 8785 §3.2.3: object members sorted by their names; no whitespace.
    expect(text.startsWith('{"expires":"2027-11-30T00:00:00Z","keys":[{"algorithm":"ed25519","key_id":"')).toBe(true);
    expect(text).not.toMatch(/signatures|\s/);
    expect(JSON.parse(text).keys.map((k: { key_id: string }) => k.key_id)).toEqual([A.key.keyId, C.key.keyId].sort());
    expect(trustSetBytes(setOf(2, 1, [A, C])).equals(trustSetBytes(body))).toBe(true);
  });

  test('when a key signs that the current set does not list, then the set is refused even though the new set lists that key', () => {
    const v2 = setOf(2, 1, [C]);
    expect(acceptTrustSet(v1, signedBy(v2, [C]))).toMatchObject({ ok: false, problem: 'not_signed_by_current' });
  });

  test('when the current threshold is 2 and one key signs twice, then the set is refused (distinct key ids, docs/SOURCES.md §6)', () => {
    const v2 = setOf(2, 2, [A, B, C]);
    const v3 = setOf(3, 2, [B, C]);
    const once = signedBy(v3, [A]);
    expect(acceptTrustSet(v2, { ...once, signatures: [...once.signatures, ...once.signatures] })).toMatchObject({ ok: false, problem: 'not_signed_by_current' });
    expect(acceptTrustSet(v2, signedBy(v3, [A, B])).ok).toBe(true);
  });

  test.each([
    { name: 'the same version', version: 1 },
    { name: 'a version skipped', version: 3 },
    { name: 'an older version', version: 0 },
  ])('when the candidate is $name, then it is refused: one version at a time', ({ version }) => {
    const body = { ...setOf(2, 1, [A, B]), version };
    const verdict = acceptTrustSet(v1, signedBy(body, [A]));
    expect(verdict.ok).toBe(false);
    if (!verdict.ok) expect(['not_next_version', 'malformed']).toContain(verdict.problem);
  });

  test('when the candidate is for another model, then it is refused', () => {
    const body = { ...setOf(2, 1, [A, B]), model: '00000000-0000-4000-8000-000000000000' };
    expect(acceptTrustSet(v1, signedBy(body, [A]))).toMatchObject({ ok: false, problem: 'other_model' });
  });

  test('when the signed bytes differ from the candidate (a key added after signing), then it is refused', () => {
    const v2 = setOf(2, 1, [A, B]);
    const grown = { ...signedBy(v2, [A]), keys: [...v2.keys, trustKeyOf(C.key)] };
    expect(acceptTrustSet(v1, grown)).toMatchObject({ ok: false, problem: 'not_signed_by_current' });
  });

  test('when the candidate asks for more signatures than it has keys, then it is refused', () => {
    expect(acceptTrustSet(v1, signedBy(setOf(2, 3, [A, B]), [A]))).toMatchObject({ ok: false, problem: 'threshold_above_keys' });
  });

  test('when a key is listed twice, or a key id does not match its public key, then the set is refused', () => {
    expect(acceptTrustSet(v1, signedBy(setOf(2, 1, [A, A]), [A]))).toMatchObject({ ok: false, problem: 'bad_key' });
    const swapped = setOf(2, 1, [A, B]);
    swapped.keys[1] = { ...swapped.keys[1], public_key: swapped.keys[0].public_key };
    expect(acceptTrustSet(v1, signedBy(swapped, [A]))).toMatchObject({ ok: false, problem: 'bad_key' });
  });

  test('when the candidate is not a trust set at all, then it is refused as malformed', () => {
    for (const candidate of [null, 'set', {}, { ...setOf(2, 1, [A]), signatures: 'none' }, { ...setOf(2, 1, []), signatures: [] }]) {
      expect(acceptTrustSet(v1, candidate)).toMatchObject({ ok: false, problem: 'malformed' });
    }
  });

  test('when an ECDSA P-256 key joins and then signs with an Ed25519 key, then 2 of 2 accepts the next set', () => {
    const v2 = setOf(2, 2, [A, ec]);
    expect(acceptTrustSet(v1, signedBy(v2, [B])).ok).toBe(true);
    const v3 = setOf(3, 1, [ec]);
    expect(acceptTrustSet(v2, signedBy(v3, [ec])).ok).toBe(false);
    expect(acceptTrustSet(v2, signedBy(v3, [ec, A])).ok).toBe(true);
  });
});

describe('expiry', () => {
  const now = new Date('2026-11-30T10:00:00Z');
  test.each([
    { expires: '2026-11-30T09:59:59Z', expired: true },
    { expires: '2026-11-30T10:00:00Z', expired: true },
    { expires: '2026-11-30T10:00:01Z', expired: false },
    { expires: null, expired: false },
  ])('when a manifest expires at $expires and it is 10:00:00, then expired is $expired (the instant itself counts as past)', ({ expires, expired }) => {
    expect(hasExpired(expires, now)).toBe(expired);
  });
});
