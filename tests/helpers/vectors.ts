// Published test keys and signatures, shared by the tests that sign with them:
// RFC 8032 §7.1 Ed25519 TEST 1–3 (docs/SOURCES.md §1, [V]) and the RFC 6979 A.2.5 ECDSA P-256 key (§2, [V]).
// Ed25519 signing is deterministic, so a vector's secret key signs any other message reproducibly.
import { createPrivateKey, createPublicKey } from 'node:crypto';

export const hex = (text: string) => Buffer.from(text, 'hex');
const b64url = (bytes: Buffer) => bytes.toString('base64url');

// Source: RFC 8032 §7.1 "Test Vectors for Ed25519", TEST 1–3 (docs/SOURCES.md §1, [V]).
export const rfc8032 = [
  {
    name: 'TEST 1',
    keyId: '06e3fd8fda29bb60',
    secret: '9d61b19deffd5a60ba844af492ec2cc44449c5697b326919703bac031cae7f60',
    publicKey: 'd75a980182b10ab7d54bfed3c964073a0ee172f3daa62325af021a68f707511a',
    message: '',
    signature:
      'e5564300c360ac729086e2cc806e828a84877f1eb8e5d974d873e065224901555fb8821590a33bacc61e39701cf9b46bd25bf5f0595bbe24655141438e7a100b',
  },
  {
    name: 'TEST 2',
    keyId: 'deb2ded39dc26fce',
    secret: '4ccd089b28ff96da9db6c346ec114e0f5b8a319f35aba624da8cf6ed4fb8a6fb',
    publicKey: '3d4017c3e843895a92b70aa74d1b7ebc9c982ccf2ec4968cc0cd55f12af4660c',
    message: '72',
    signature:
      '92a009a9f0d4cab8720e820b5f642540a2b27b5416503f8fb3762223ebdb69da085ac1e43e15996e458f3613d0f11d8c387b2eaeb4302aeeb00d291612bb0c00',
  },
  {
    name: 'TEST 3',
    keyId: '8d39ba50abe50f77',
    secret: 'c5aa8df43f9f837bedb7442f31dcb7b166d38535076f094b85ce3a2e0b4458f7',
    publicKey: 'fc51cd8e6218a1a38da47ed00230f0580816ed13ba3303ac5deb911548908025',
    message: 'af82',
    signature:
      '6291d657deec24024827e69c3abe01a30ce548a284743a445e3680d7db5ac3ac18ff9b538d16f290ae67f760984dc6594a7c15e9716ed28dc027beceea1ec40a',
  },
];

/** SPKI DER of a raw Ed25519 public key (docs/SOURCES.md §1 [D]: the RFC 8410 prefix, as pyca writes it). */
export const ed25519Spki = (publicKey: string) => Buffer.concat([hex('302a300506032b6570032100'), hex(publicKey)]);
export const spkiPem = (der: Buffer) => String(createPublicKey({ key: der, format: 'der', type: 'spki' }).export({ type: 'spki', format: 'pem' }));

/**
 * PKCS#8 PEM of an RFC 8032 vector's key, through the RFC 8037 §2 OKP JWK (from memory: d is the 32-byte
 * seed, x the public key); tests/unit/signatures.test.ts checks it reproduces the RFC's signatures.
 */
export const ed25519PrivatePem = (vector: { secret: string; publicKey: string }) =>
  String(
    createPrivateKey({ key: { kty: 'OKP', crv: 'Ed25519', d: b64url(hex(vector.secret)), x: b64url(hex(vector.publicKey)) }, format: 'jwk' }).export({
      type: 'pkcs8',
      format: 'pem',
    }),
  );

// Source: RFC 6979 Appendix A.2.5 "ECDSA, 256 Bits (Prime Field)", SHA-256, message "sample" (docs/SOURCES.md §2, [V]).
export const p256 = {
  x: 'C9AFA9D845BA75166B5C215767B1D6934E50C3DB36E89B127B8A622B120F6721',
  ux: '60FED4BA255A9D31C961EB74C6356D68C049B8923B61FA6CE669622E60F29FB6',
  uy: '7903FE1008B8BC99A41AE9E95628BC64F2F1B20C2D7E9F5177A3C294D4462299',
  r: 'EFD48B2AACB6A8FD1140DD9CD45E81D69D2C877B56AAF991C34D0EA84EAF3716',
  s: 'F7CB1C942D657C41D436C7A1B6E29F65F3E900DBB9AFF4064DC4AB2F843ACDA8',
};
export const p256PublicPem = String(
  createPublicKey({ key: { kty: 'EC', crv: 'P-256', x: b64url(hex(p256.ux)), y: b64url(hex(p256.uy)) }, format: 'jwk' }).export({
    type: 'spki',
    format: 'pem',
  }),
);
export const p256PrivatePem = String(
  createPrivateKey({
    key: { kty: 'EC', crv: 'P-256', x: b64url(hex(p256.ux)), y: b64url(hex(p256.uy)), d: b64url(hex(p256.x)) },
    format: 'jwk',
  }).export({ type: 'pkcs8', format: 'pem' }),
);
