import { createHash, generateKeyPairSync, randomBytes } from 'node:crypto';
import { canonicalManifest, parsePublicKeyPem, signManifest, type SigningPublicKey } from '../../server/images/manifest';
import { verifyImage, type Offer, type TrustAnchor } from '../../scripts/simulator/logger';

// The virtual logger's image check, the one firmware must make before it installs (DEVICE_API.md
// "The signed manifest"; RFC 9124 §4.3.1 SEQUENCE, §4.3.2 COMPATIBLE, §4.3.4 AUTHENTIC, §4.3.15
// IMG.COMPLETE_DIGEST). Keys come from node:crypto (Ed25519 per RFC 8032, ECDSA P-256 per FIPS 186),
// digests from node:crypto's SHA-256 (FIPS 180-4), signatures from the console's signManifest.
const MODEL = '6f1c2d3e-4a5b-4c6d-8e9f-0a1b2c3d4e5f';
const OTHER_MODEL = '0f1c2d3e-4a5b-4c6d-8e9f-0a1b2c3d4e5f';

type Signer = { privatePem: string; publicKey: SigningPublicKey };

function signer(algorithm: 'ed25519' | 'ecdsa-p256-sha256'): Signer {
  const pair =
    algorithm === 'ed25519'
      ? generateKeyPairSync('ed25519')
      : generateKeyPairSync('ec', { namedCurve: 'prime256v1' });
  const privatePem = String(pair.privateKey.export({ type: 'pkcs8', format: 'pem' }));
  const publicKey = parsePublicKeyPem(String(pair.publicKey.export({ type: 'spki', format: 'pem' })));
  return { privatePem, publicKey };
}

const sha256 = (bytes: Uint8Array) => createHash('sha256').update(bytes).digest('hex');

type ReleaseOptions = { version?: string; counter?: number; boards?: string[]; model?: string; image?: Buffer; signedBy?: Signer; keyOf?: Signer };

function release(key: Signer, options: ReleaseOptions = {}): { offer: Offer; image: Buffer } {
  const image = options.image ?? randomBytes(4096 + 17);
  const manifest = canonicalManifest({
    board_revisions: options.boards ?? ['B', 'C'],
    format: 1,
    image_sha256: sha256(image),
    image_size: image.length,
    issued_at: '2026-11-30T10:00:00Z',
    model: options.model ?? MODEL,
    security_counter: options.counter ?? 5,
    version: options.version ?? '2.4.0',
  });
  const by = options.signedBy ?? key;
  const keyOf = options.keyOf ?? key;
  const offer: Offer = {
    release: '11111111-2222-4333-8444-555555555555',
    version: options.version ?? '2.4.0',
    security_counter: options.counter ?? 5,
    manifest: Buffer.from(manifest, 'utf8').toString('base64'),
    signature: signManifest(manifest, by.privatePem),
    key_id: keyOf.publicKey.keyId,
    algorithm: keyOf.publicKey.algorithm,
    image: { url: `/api/device/v1/images/${sha256(image)}`, sha256: sha256(image), size: image.length },
  };
  return { offer, image };
}

describe.each(['ed25519', 'ecdsa-p256-sha256'] as const)('a logger verifying a %s-signed image', (algorithm) => {
  const key = signer(algorithm);
  const anchor: TrustAnchor = { trustedKeys: [key.publicKey], board: 'B', securityCounter: 4, firmware: '2.3.1', modelId: MODEL };

  test('when the image, manifest and signature are genuine and meant for it, then it accepts the image', () => {
    const { offer, image } = release(key);
    const verdict = verifyImage(offer, image, anchor);
    expect(verdict).toEqual({ ok: true, manifest: expect.objectContaining({ version: '2.4.0', image_sha256: sha256(image) }) });
  });

  test('when one byte of the image was changed on the way (same size), then it rejects it as integrity: the SHA-256 differs', () => {
    const { offer, image } = release(key);
    const tampered = Buffer.from(image);
    tampered[1234] ^= 0x01;
    expect(sha256(tampered)).not.toBe(sha256(image));
    expect(verifyImage(offer, tampered, anchor)).toMatchObject({ ok: false, reason: 'integrity' });
  });

  test.each([
    { label: 'one byte short', change: (b: Buffer) => b.subarray(0, b.length - 1) },
    { label: 'one byte extra', change: (b: Buffer) => Buffer.concat([b, Buffer.from([0])]) },
    { label: 'empty', change: () => Buffer.alloc(0) },
  ])('when the image arrives $label, then it rejects it as integrity: the size is not the manifest’s', ({ change }) => {
    const { offer, image } = release(key);
    const verdict = verifyImage(offer, change(image), anchor);
    expect(verdict).toMatchObject({ ok: false, reason: 'integrity' });
    if (!verdict.ok) expect(verdict.detail).toMatch(/bytes, the manifest says/);
  });

  test('when the signature has one bit flipped, then it rejects the image as signature', () => {
    const { offer, image } = release(key);
    const sig = Buffer.from(offer.signature, 'base64');
    sig[10] ^= 0x80;
    expect(verifyImage({ ...offer, signature: sig.toString('base64') }, image, anchor)).toMatchObject({ ok: false, reason: 'signature' });
  });

  test('when the manifest was edited after signing (boards widened to A), then it rejects the image as signature', () => {
    const { offer, image } = release(key);
    const edited = canonicalManifest({ ...JSON.parse(Buffer.from(offer.manifest, 'base64').toString('utf8')), board_revisions: ['A', 'B', 'C'] });
    expect(verifyImage({ ...offer, manifest: Buffer.from(edited).toString('base64') }, image, anchor)).toMatchObject({ ok: false, reason: 'signature' });
  });

  test('when another key signed the manifest but the offer names the trusted key id, then it rejects the image as signature', () => {
    const intruder = signer(algorithm);
    const { offer, image } = release(key, { signedBy: intruder, keyOf: key });
    expect(verifyImage(offer, image, anchor)).toMatchObject({ ok: false, reason: 'signature' });
  });

  test('when the signing key is not one the logger holds, then it rejects the image as signature even though the signature is valid', () => {
    const stranger = signer(algorithm);
    const { offer, image } = release(stranger);
    const verdict = verifyImage(offer, image, anchor);
    expect(verdict).toMatchObject({ ok: false, reason: 'signature' });
    if (!verdict.ok) expect(verdict.detail).toContain(stranger.publicKey.keyId);
  });

  test('when the manifest’s security counter is below the logger’s, then it refuses the image (RFC 9124 §4.3.1: never install a lower sequence number)', () => {
    const { offer, image } = release(key, { counter: 3 });
    const verdict = verifyImage(offer, image, anchor);
    expect(verdict).toMatchObject({ ok: false, reason: 'unsupported' });
    if (!verdict.ok) expect(verdict.detail).toMatch(/security counter 3 is below this logger's 4/);
  });

  test('when the manifest’s security counter equals the logger’s, then it accepts the image (DEVICE_API.md: counter ≥ the logger’s)', () => {
    const { offer, image } = release(key, { counter: 4 });
    expect(verifyImage(offer, image, anchor).ok).toBe(true);
  });

  test('when the manifest does not list the logger’s board, then it refuses the image as unsupported', () => {
    const { offer, image } = release(key, { boards: ['C'] });
    const verdict = verifyImage(offer, image, anchor);
    expect(verdict).toMatchObject({ ok: false, reason: 'unsupported' });
    if (!verdict.ok) expect(verdict.detail).toMatch(/not board B/);
  });

  test('when the manifest is for another model, then it refuses the image as unsupported', () => {
    const { offer, image } = release(key, { model: OTHER_MODEL });
    expect(verifyImage(offer, image, anchor)).toMatchObject({ ok: false, reason: 'unsupported' });
  });

  test('when the logger already runs that version or a newer one (semver.org precedence), then it refuses the image as unsupported', () => {
    const { offer, image } = release(key, { version: '2.3.1' });
    expect(verifyImage(offer, image, anchor)).toMatchObject({ ok: false, reason: 'unsupported' });
    // semver.org item 11: 2.4.0-rc.1 < 2.4.0, so a logger on 2.4.0 does not take the release candidate.
    const rc = release(key, { version: '2.4.0-rc.1' });
    expect(verifyImage(rc.offer, rc.image, { ...anchor, firmware: '2.4.0' })).toMatchObject({ ok: false, reason: 'unsupported' });
  });

  test('when the offer names a different image than the signed manifest, then it refuses as integrity: only the manifest is trusted', () => {
    const { offer, image } = release(key);
    const other = randomBytes(image.length);
    const swapped = { ...offer, image: { ...offer.image, sha256: sha256(other) } };
    expect(verifyImage(swapped, other, anchor)).toMatchObject({ ok: false, reason: 'integrity' });
  });

  test('when the offer names another algorithm than the trusted key uses, then it refuses as signature', () => {
    const { offer, image } = release(key);
    const wrong = algorithm === 'ed25519' ? 'ecdsa-p256-sha256' : 'ed25519';
    expect(verifyImage({ ...offer, algorithm: wrong }, image, anchor)).toMatchObject({ ok: false, reason: 'signature' });
  });
});
