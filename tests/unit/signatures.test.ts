import { createPrivateKey, createPublicKey, generateKeyPairSync, sign as nodeSign, verify as nodeVerify } from 'node:crypto';
import {
  canonicalManifest,
  decodeSignature,
  keyIdOf,
  ManifestError,
  parsePublicKeyPem,
  publicKeyOfPrivatePem,
  signManifest,
  verifyManifestSignature,
} from '../../server/images/manifest';
import { ed25519Spki, hex, p256, p256PrivatePem, p256PublicPem, rfc8032, spkiPem } from '../helpers/vectors';

const b64url = (bytes: Buffer) => bytes.toString('base64url');

function refusal(run: () => unknown): ManifestError {
  try {
    run();
  } catch (error) {
    if (error instanceof ManifestError) return error;
    throw error;
  }
  throw new Error('expected a ManifestError, but nothing was thrown');
}




describe('Ed25519 (RFC 8032)', () => {
  test.each(rfc8032)('when the RFC 8032 §7.1 $name signature is checked, then it verifies over its message', (vector) => {
    const der = ed25519Spki(vector.publicKey);
    const key = parsePublicKeyPem(spkiPem(der));
    expect(key.algorithm).toBe('ed25519');
    expect(key.spkiDer.equals(der)).toBe(true);
    expect(verifyManifestSignature(hex(vector.message), hex(vector.signature), key)).toBe(true);
    expect(verifyManifestSignature(hex(vector.message), hex(vector.signature).toString('base64'), key.pem)).toBe(true);
  });

  // The key ids are literals computed outside Node with the OpenSSL 3.0 command line (DEVICE_API.md: the first 16 hex
  // characters of SHA-256 over the SPKI DER). For each RFC 8032 public key:
  //   printf '302a300506032b6570032100%s' <PUBLIC KEY> | xxd -r -p \
  //     | openssl pkey -pubin -inform DER -outform DER | openssl dgst -sha256 -r | cut -c1-16
  // (openssl re-encodes the DER, so the prefix is checked to be the SPKI OpenSSL itself writes.)
  test.each(rfc8032)('when the $name key id is computed, then it is the first 16 hex of SHA-256 over the SPKI DER, as openssl computes it', (vector) => {
    const der = ed25519Spki(vector.publicKey);
    expect(parsePublicKeyPem(spkiPem(der)).keyId).toBe(vector.keyId);
    expect(keyIdOf(der)).toBe(vector.keyId);
    expect(keyIdOf(createPublicKey({ key: der, format: 'der', type: 'spki' }))).toBe(vector.keyId);
  });

  test.each(rfc8032)('when the $name secret key signs its message, then the RFC signature comes out (Ed25519 is deterministic)', (vector) => {
    // RFC 8037 §2 OKP JWK (from memory): d is the 32-byte seed, x the public key. The public key derived from d is checked below.
    const privateKey = createPrivateKey({
      key: { kty: 'OKP', crv: 'Ed25519', d: b64url(hex(vector.secret)), x: b64url(hex(vector.publicKey)) },
      format: 'jwk',
    });
    const pem = String(privateKey.export({ type: 'pkcs8', format: 'pem' }));
    expect(signManifest(hex(vector.message), pem)).toBe(hex(vector.signature).toString('base64'));
    expect(publicKeyOfPrivatePem(pem).spkiDer.equals(ed25519Spki(vector.publicKey))).toBe(true);
  });

  test('when one byte of the TEST 3 message or signature changes, then verification fails', () => {
    const { publicKey, message, signature } = rfc8032[2];
    const key = parsePublicKeyPem(spkiPem(ed25519Spki(publicKey)));
    const flippedMessage = hex(message);
    flippedMessage[0] ^= 0x01;
    const flippedSignature = hex(signature);
    flippedSignature[10] ^= 0x01;
    expect(verifyManifestSignature(flippedMessage, hex(signature), key)).toBe(false);
    expect(verifyManifestSignature(hex(message), flippedSignature, key)).toBe(false);
    // TEST 2's signature is valid, but not by TEST 3's key.
    expect(verifyManifestSignature(hex(rfc8032[1].message), hex(rfc8032[1].signature), key)).toBe(false);
  });
});

const sample = Buffer.from('sample', 'utf8');
const rs = Buffer.concat([hex(p256.r), hex(p256.s)]);

describe('ECDSA P-256 with SHA-256 (RFC 6979)', () => {
  test('when the RFC 6979 A.2.5 signature over "sample" is checked as raw r‖s, then it verifies', () => {
    const key = parsePublicKeyPem(p256PublicPem);
    expect(key.algorithm).toBe('ecdsa-p256-sha256');
    // Literal from the OpenSSL 3.0 command line over the RFC 6979 A.2.5 public key (uncompressed point 04‖Ux‖Uy in a
    // P-256 SPKI): printf '3059301306072a8648ce3d020106082a8648ce3d03010703420004%s%s' <Ux> <Uy> | xxd -r -p \
    //   | openssl pkey -pubin -inform DER -outform DER | openssl dgst -sha256 -r | cut -c1-16
    expect(key.keyId).toBe('5a7a78cca4a0f420');
    expect(verifyManifestSignature(sample, rs, key)).toBe(true);
    expect(verifyManifestSignature(sample, rs.toString('base64'), p256PublicPem)).toBe(true);
  });

  test('when one byte of r, s or the message changes, then verification fails', () => {
    const key = parsePublicKeyPem(p256PublicPem);
    for (const at of [0, 31, 32, 63]) {
      const flipped = Buffer.from(rs);
      flipped[at] ^= 0x01;
      expect(verifyManifestSignature(sample, flipped, key)).toBe(false);
    }
    expect(verifyManifestSignature(Buffer.from('samplf'), rs, key)).toBe(false);
  });

  test('when the A.2.5 signature arrives DER-encoded (72 bytes), then it is refused as the wrong length', () => {
    // docs/SOURCES.md §2 [D]: r and s each get a 00 prefix, so the DER form is 30 46 02 21 00‖r 02 21 00‖s.
    const der = Buffer.concat([hex('3046022100'), hex(p256.r), hex('022100'), hex(p256.s)]);
    expect(der).toHaveLength(72);
    const error = refusal(() => decodeSignature(der.toString('base64'), 'ecdsa-p256-sha256'));
    expect(error.field).toBe('signature');
    expect(error.code).toBe('signature_length');
    expect(error.message).toMatch(/64 bytes \(raw r‖s\), got 72 bytes.*DER/);
    expect(refusal(() => verifyManifestSignature(sample, der, parsePublicKeyPem(p256PublicPem))).code).toBe('signature_length');
  });

  test('when node:crypto signs with its default DER encoding (70–72 bytes), then that signature is refused too', () => {
    const der = nodeSign('sha256', sample, createPrivateKey(p256PrivatePem));
    expect(der.length).toBeGreaterThanOrEqual(70);
    expect(der.length).toBeLessThanOrEqual(72);
    expect(refusal(() => decodeSignature(der.toString('base64'), 'ecdsa-p256-sha256')).code).toBe('signature_length');
  });
});

describe('signing and verifying manifests', () => {
  const manifest = Buffer.from(
    canonicalManifest({
      board_revisions: ['B', 'C'],
      format: 1,
      image_sha256: 'ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad',
      image_size: 123456,
      issued_at: '2026-11-30T10:00:00Z',
      model: '6f1c2a3e-9b4d-4c1e-8a7f-2d3b4c5d6e7f',
      security_counter: 5,
      version: '2.4.0',
    }),
  );

  test.each([
    ['Ed25519', () => generateKeyPairSync('ed25519')],
    ['ECDSA P-256', () => generateKeyPairSync('ec', { namedCurve: 'prime256v1' })],
  ])('when a new %s key signs a manifest, then the signature is 64 bytes and verifies only over those exact bytes', (_name, generate) => {
    const { privateKey, publicKey } = generate();
    const privatePem = String(privateKey.export({ type: 'pkcs8', format: 'pem' }));
    const key = parsePublicKeyPem(String(publicKey.export({ type: 'spki', format: 'pem' })));
    const signature = signManifest(manifest, privatePem);
    expect(decodeSignature(`${signature}\n`, key.algorithm)).toHaveLength(64);
    expect(verifyManifestSignature(manifest, signature, key)).toBe(true);
    const tampered = Buffer.from(manifest.toString('utf8').replace('"security_counter":5', '"security_counter":4'));
    expect(verifyManifestSignature(tampered, signature, key)).toBe(false);
    // node:crypto's own verifier agrees (reference; for ECDSA with the IEEE P1363 raw r‖s encoding, docs/SOURCES.md §2).
    const raw = Buffer.from(signature, 'base64');
    const nodeSays =
      key.algorithm === 'ed25519'
        ? nodeVerify(null, manifest, publicKey, raw)
        : nodeVerify('sha256', manifest, { key: publicKey, dsaEncoding: 'ieee-p1363' }, raw);
    expect(nodeSays).toBe(true);
    expect(publicKeyOfPrivatePem(privatePem).keyId).toBe(key.keyId);
  });

  test('when the key is EC P-256 but the signature was made by another key, then verification fails', () => {
    const other = generateKeyPairSync('ec', { namedCurve: 'prime256v1' });
    const signature = signManifest(manifest, p256PrivatePem);
    const otherKey = parsePublicKeyPem(String(other.publicKey.export({ type: 'spki', format: 'pem' })));
    expect(verifyManifestSignature(manifest, signature, otherKey)).toBe(false);
    expect(verifyManifestSignature(manifest, signature, p256PublicPem)).toBe(true);
  });

  const badEncodings: [string, string, RegExp][] = [
    ['empty', '   \n', /empty/],
    ['base64url', b64url(rs).replace(/=+$/, ''), /not standard base64/],
    ['unpadded', rs.toString('base64').replace(/=+$/, ''), /not standard base64/],
    ['hex', rs.toString('hex'), /64 bytes|not standard base64/],
    ['inner spaces', rs.toString('base64').replace(/(.{8})/, '$1 '), /not standard base64/],
    ['63 bytes', rs.subarray(1).toString('base64'), /64 bytes.*got 63 bytes/],
    ['65 bytes', Buffer.concat([rs, hex('00')]).toString('base64'), /64 bytes.*got 65 bytes/],
  ];
  test.each(badEncodings)('when the signature is %s, then it is refused with the reason', (_what, text, message) => {
    const error = refusal(() => decodeSignature(text, 'ed25519'));
    expect(error.field).toBe('signature');
    expect(error.message).toMatch(message);
  });

  test('when the signature has surrounding whitespace or a final newline, then it is read', () => {
    expect(decodeSignature(`  ${rs.toString('base64')}\r\n`, 'ecdsa-p256-sha256').equals(rs)).toBe(true);
    expect(decodeSignature(Buffer.from(`${rs.toString('base64')}\n`), 'ecdsa-p256-sha256').equals(rs)).toBe(true);
  });
});

describe('registering public keys', () => {
  const pemOf = (key: { export: (o: { type: 'spki'; format: 'pem' }) => string | Buffer }) => String(key.export({ type: 'spki', format: 'pem' }));

  test('when an RSA public key is given, then it is refused naming the accepted algorithms', () => {
    const { publicKey } = generateKeyPairSync('rsa', { modulusLength: 2048 });
    const error = refusal(() => parsePublicKeyPem(pemOf(publicKey)));
    expect(error.field).toBe('publicKeyPem');
    expect(error.code).toBe('unsupported_key');
    expect(error.message).toMatch(/RSA key: use Ed25519 or ECDSA P-256/);
  });

  test('when a P-384 public key is given, then it is refused naming the curve', () => {
    const { publicKey } = generateKeyPairSync('ec', { namedCurve: 'secp384r1' });
    const error = refusal(() => parsePublicKeyPem(pemOf(publicKey)));
    expect(error.code).toBe('unsupported_key');
    expect(error.message).toMatch(/curve secp384r1: only P-256 \(prime256v1\)/);
  });

  test('when a private key is pasted (PKCS#8 or SEC1), then it is refused and not parsed as a public key', () => {
    const { privateKey } = generateKeyPairSync('ed25519');
    const pkcs8 = String(privateKey.export({ type: 'pkcs8', format: 'pem' }));
    const sec1 = String(generateKeyPairSync('ec', { namedCurve: 'prime256v1' }).privateKey.export({ type: 'sec1', format: 'pem' }));
    for (const pem of [pkcs8, sec1]) {
      const error = refusal(() => parsePublicKeyPem(pem));
      expect(error.code).toBe('private_key_given');
      expect(error.message).toMatch(/private key/);
    }
  });

  test('when the text is not a PEM public key, then the refusal says what was expected', () => {
    const valid = pemOf(generateKeyPairSync('ed25519').publicKey);
    const damaged = valid.replace(/\n[A-Za-z0-9+/]{8}/, '\n!!!!!!!!');
    const cases: [string, RegExp][] = [
      ['', /paste the public key/],
      ['ssh-ed25519 AAAAC3NzaC1lZDI1NTE5AAAA', /expected -----BEGIN PUBLIC KEY-----/],
      [damaged, /cannot be read/],
      ['-----BEGIN CERTIFICATE-----\nMIIB\n-----END CERTIFICATE-----\n', /got -----BEGIN CERTIFICATE-----/],
      [valid + valid, /found 2 PEM blocks/],
    ];
    for (const [text, message] of cases) {
      const error = refusal(() => parsePublicKeyPem(text));
      expect(error.field).toBe('publicKeyPem');
      expect(error.message).toMatch(message);
    }
  });

  test('when a key is registered with extra whitespace around it, then the stored PEM is normalized', () => {
    const pem = pemOf(generateKeyPairSync('ed25519').publicKey);
    const parsed = parsePublicKeyPem(`\n\n  ${pem.replace(/\n/g, '\r\n')}  \n`);
    expect(parsed.pem).toBe(pem);
  });

  test('when the signing side is given a public key or an RSA private key, then it refuses', () => {
    expect(refusal(() => signManifest('x', p256PublicPem)).field).toBe('privateKeyPem');
    const rsa = String(generateKeyPairSync('rsa', { modulusLength: 2048 }).privateKey.export({ type: 'pkcs8', format: 'pem' }));
    expect(refusal(() => signManifest('x', rsa)).message).toMatch(/RSA key/);
  });
});
