// The signed manifest: RFC 8785 canonical form, signing-key parsing, key ids and signature checks.
// Pure (no file or network I/O) so that the console and the offline `heliodor` CLI share one
// definition of what "signed" means.
import { createHash, createPrivateKey, createPublicKey, KeyObject, sign, verify } from 'node:crypto';
import canonicalize from 'canonicalize';
import { manifestSchema, type Manifest, type SignatureAlgorithm } from '../../schemas/manifest';
import type { FieldError } from '../http/problem';

export type { Manifest, SignatureAlgorithm };

/** Which part of a signed upload (or CLI input) a problem is about. */
export type ManifestErrorField = 'manifest' | 'signature' | 'publicKeyPem' | 'privateKeyPem' | 'image';

/** Why a manifest, signature or key was refused; `errors` lists field problems inside the manifest. */
export type ManifestErrorCode =
  | 'not_utf8'
  | 'not_json'
  | 'not_canonical'
  | 'invalid_fields'
  | 'signature_encoding'
  | 'signature_length'
  | 'not_a_public_key'
  | 'private_key_given'
  | 'unsupported_key'
  | 'not_a_private_key';

export class ManifestError extends Error {
  readonly field: ManifestErrorField;
  readonly code: ManifestErrorCode;
  readonly errors: FieldError[];

  constructor(field: ManifestErrorField, code: ManifestErrorCode, message: string, errors: FieldError[] = []) {
    super(message);
    this.name = 'ManifestError';
    this.field = field;
    this.code = code;
    this.errors = errors;
  }
}

/** Signatures are 64 bytes for both algorithms: Ed25519 (RFC 8032 §5.1.6) and ECDSA P-256 as raw r‖s. */
export const signatureLength = 64;

const algorithmNames: Record<SignatureAlgorithm, string> = {
  ed25519: 'Ed25519',
  'ecdsa-p256-sha256': 'ECDSA P-256',
};

/** RFC 8785 (JCS) text of any JSON value. Refuses values JSON cannot carry (NaN, Infinity, undefined). */
export function canonicalJson(value: unknown): string {
  let text: string | undefined;
  try {
    text = canonicalize(value);
  } catch (error) {
    throw new ManifestError('manifest', 'invalid_fields', `cannot be written as canonical JSON: ${(error as Error).message}`);
  }
  if (text === undefined) throw new ManifestError('manifest', 'invalid_fields', 'cannot be written as canonical JSON: no JSON value');
  return text;
}

function fieldErrorsOf(issues: readonly { path: readonly PropertyKey[]; message: string }[]): FieldError[] {
  return issues.map((issue) => ({
    path: ['manifest', ...issue.path.map(String)].join('.'),
    message: issue.message,
  }));
}

function invalidFields(errors: FieldError[]): ManifestError {
  const list = errors.map((e) => `${e.path} ${e.message}`).join('; ');
  return new ManifestError('manifest', 'invalid_fields', `the manifest has field errors: ${list}`, errors);
}

/** Validates a manifest object and returns its canonical text (the exact bytes to sign, as UTF-8). */
export function canonicalManifest(manifest: unknown): string {
  const result = manifestSchema.safeParse(manifest);
  if (!result.success) throw invalidFields(fieldErrorsOf(result.error.issues));
  return canonicalJson(result.data);
}

/**
 * Reads the exact bytes a release engineer signed. They must be JSON, carry valid manifest fields,
 * and be byte for byte the RFC 8785 canonical form: a logger verifies these bytes, not a re-encoding.
 */
export function parseSignedManifest(bytes: Buffer | Uint8Array): Manifest {
  const raw = Buffer.isBuffer(bytes) ? bytes : Buffer.from(bytes);
  if (raw.length === 0) throw new ManifestError('manifest', 'not_json', 'the manifest is empty');
  let text: string;
  try {
    // A byte order mark is dropped here and then caught by the canonical-form check below.
    text = new TextDecoder('utf-8', { fatal: true }).decode(raw);
  } catch {
    throw new ManifestError('manifest', 'not_utf8', 'the manifest is not UTF-8 text');
  }
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch (error) {
    throw new ManifestError('manifest', 'not_json', `the manifest is not JSON: ${(error as Error).message}`);
  }
  const result = manifestSchema.safeParse(value);
  if (!result.success) throw invalidFields(fieldErrorsOf(result.error.issues));

  const canonical = Buffer.from(canonicalJson(value), 'utf8');
  if (!canonical.equals(raw)) {
    let at = 0;
    while (at < raw.length && at < canonical.length && raw[at] === canonical[at]) at += 1;
    throw new ManifestError(
      'manifest',
      'not_canonical',
      `the manifest is not in RFC 8785 canonical form (first difference at byte ${at}): re-create it with \`heliodor manifest\``,
    );
  }
  return result.data;
}

/** Key id (DEVICE_API.md): hex SHA-256 of the DER SubjectPublicKeyInfo, first 16 characters. */
export function keyIdOf(publicKey: KeyObject | Buffer | Uint8Array): string {
  const der = publicKey instanceof KeyObject ? publicKey.export({ type: 'spki', format: 'der' }) : publicKey;
  return createHash('sha256').update(der).digest('hex').slice(0, 16);
}

export type SigningPublicKey = {
  algorithm: SignatureAlgorithm;
  keyId: string;
  spkiDer: Buffer;
  /** Normalized PEM (SubjectPublicKeyInfo, as Node writes it). */
  pem: string;
};

/** The algorithm a key is used with, or a reason it cannot sign manifests. */
function algorithmOf(key: KeyObject): SignatureAlgorithm | string {
  const type = key.asymmetricKeyType;
  if (type === 'ed25519') return 'ed25519';
  if (type === 'ec') {
    const curve = key.asymmetricKeyDetails?.namedCurve;
    if (curve === 'prime256v1') return 'ecdsa-p256-sha256';
    return `an EC key on curve ${curve ?? 'unknown'}: only P-256 (prime256v1) is accepted`;
  }
  if (type === 'rsa' || type === 'rsa-pss') return 'an RSA key: use Ed25519 or ECDSA P-256';
  return `a ${type ?? 'unknown'} key: use Ed25519 or ECDSA P-256`;
}

const pemBlock = /-----BEGIN ([A-Z0-9 ]+)-----/g;

/**
 * Parses a signing key's public half as registered in the console: one PEM SubjectPublicKeyInfo
 * (-----BEGIN PUBLIC KEY-----) holding an Ed25519 or ECDSA P-256 key.
 */
export function parsePublicKeyPem(pem: string): SigningPublicKey {
  if (typeof pem !== 'string' || pem.trim() === '') {
    throw new ManifestError('publicKeyPem', 'not_a_public_key', 'paste the public key in PEM form (-----BEGIN PUBLIC KEY-----)');
  }
  const labels = [...pem.matchAll(pemBlock)].map((m) => m[1]);
  if (labels.some((label) => label.includes('PRIVATE KEY'))) {
    throw new ManifestError(
      'publicKeyPem',
      'private_key_given',
      'this is a private key: register the public key (the .public.pem file) and keep the private key offline',
    );
  }
  if (labels.length === 0) {
    throw new ManifestError('publicKeyPem', 'not_a_public_key', 'not a PEM public key: expected -----BEGIN PUBLIC KEY-----');
  }
  if (labels.length > 1) {
    throw new ManifestError('publicKeyPem', 'not_a_public_key', `expected one PEM public key, found ${labels.length} PEM blocks`);
  }
  if (labels[0] !== 'PUBLIC KEY') {
    throw new ManifestError(
      'publicKeyPem',
      'not_a_public_key',
      `expected a PEM SubjectPublicKeyInfo (-----BEGIN PUBLIC KEY-----), got -----BEGIN ${labels[0]}-----`,
    );
  }
  // Pasted keys arrive with CRLF line ends, indentation or re-wrapped lines: rebuild the block.
  const body = /-----BEGIN PUBLIC KEY-----([\s\S]*?)-----END PUBLIC KEY-----/.exec(pem)?.[1].replace(/\s+/g, '') ?? '';
  const rebuilt = `-----BEGIN PUBLIC KEY-----\n${body.replace(/(.{64})/g, '$1\n').replace(/\n?$/, '\n')}-----END PUBLIC KEY-----\n`;
  let key: KeyObject;
  try {
    if (!/^[A-Za-z0-9+/]+={0,2}$/.test(body)) throw new Error('not base64');
    key = createPublicKey({ key: rebuilt, format: 'pem' });
  } catch {
    throw new ManifestError('publicKeyPem', 'not_a_public_key', 'the PEM public key cannot be read: it is damaged or incomplete');
  }
  const algorithm = algorithmOf(key);
  if (algorithm !== 'ed25519' && algorithm !== 'ecdsa-p256-sha256') {
    throw new ManifestError('publicKeyPem', 'unsupported_key', `the public key is ${algorithm}`);
  }
  const spkiDer = key.export({ type: 'spki', format: 'der' });
  return { algorithm, keyId: keyIdOf(spkiDer), spkiDer, pem: String(key.export({ type: 'spki', format: 'pem' })) };
}

const base64Text = /^[A-Za-z0-9+/]*={0,2}$/;

/**
 * Decodes a signature sent as standard base64 (RFC 4648 §4, padded). Surrounding whitespace such as
 * a final newline is tolerated; anything else is refused rather than guessed at.
 */
export function decodeSignature(text: string | Buffer, algorithm: SignatureAlgorithm): Buffer {
  const trimmed = (typeof text === 'string' ? text : text.toString('utf8')).trim();
  if (trimmed === '') throw new ManifestError('signature', 'signature_encoding', 'the signature is empty: expected base64 text');
  if (!base64Text.test(trimmed) || trimmed.length % 4 !== 0) {
    const reason = /[-_]/.test(trimmed) && !/[+/]/.test(trimmed) ? ' (this looks like base64url)' : '';
    throw new ManifestError('signature', 'signature_encoding', `the signature is not standard base64${reason}`);
  }
  const bytes = Buffer.from(trimmed, 'base64');
  if (bytes.toString('base64') !== trimmed) {
    throw new ManifestError('signature', 'signature_encoding', 'the signature is not standard base64 (bad padding)');
  }
  assertSignatureLength(bytes, algorithm);
  return bytes;
}

function assertSignatureLength(bytes: Buffer, algorithm: SignatureAlgorithm) {
  if (bytes.length === signatureLength) return;
  const looksDer = algorithm === 'ecdsa-p256-sha256' && bytes[0] === 0x30 && bytes.length >= 8 && bytes.length <= 72;
  const hint = looksDer ? ' (this looks like a DER-encoded ECDSA signature; Heliodor expects raw r‖s, IEEE P1363)' : '';
  const shape = algorithm === 'ed25519' ? '64 bytes' : '64 bytes (raw r‖s)';
  throw new ManifestError(
    'signature',
    'signature_length',
    `an ${algorithmNames[algorithm]} signature is ${shape}, got ${bytes.length} bytes${hint}`,
  );
}

/**
 * True when `signature` is a valid signature over exactly `manifestBytes` by `publicKey`.
 * A signature string is decoded as base64 first; a malformed signature throws ManifestError.
 */
export function verifyManifestSignature(
  manifestBytes: Buffer | Uint8Array,
  signature: Buffer | Uint8Array | string,
  publicKey: SigningPublicKey | string,
): boolean {
  const key = typeof publicKey === 'string' ? parsePublicKeyPem(publicKey) : publicKey;
  const sig = typeof signature === 'string' ? decodeSignature(signature, key.algorithm) : Buffer.from(signature);
  assertSignatureLength(sig, key.algorithm);
  const keyObject = createPublicKey({ key: key.spkiDer, format: 'der', type: 'spki' });
  if (key.algorithm === 'ed25519') return verify(null, manifestBytes, keyObject, sig);
  return verify('sha256', manifestBytes, { key: keyObject, dsaEncoding: 'ieee-p1363' }, sig);
}

function readPrivateKey(privateKeyPem: string): { key: KeyObject; algorithm: SignatureAlgorithm } {
  let key: KeyObject;
  try {
    key = createPrivateKey({ key: privateKeyPem, format: 'pem' });
  } catch {
    throw new ManifestError('privateKeyPem', 'not_a_private_key', 'the private key cannot be read: expected an unencrypted PEM private key');
  }
  const algorithm = algorithmOf(key);
  if (algorithm !== 'ed25519' && algorithm !== 'ecdsa-p256-sha256') {
    throw new ManifestError('privateKeyPem', 'unsupported_key', `the private key is ${algorithm}`);
  }
  return { key, algorithm };
}

/** The signing side, for the offline CLI and tests: base64 signature over the exact manifest bytes. */
export function signManifest(manifestBytes: Buffer | Uint8Array | string, privateKeyPem: string): string {
  const { key, algorithm } = readPrivateKey(privateKeyPem);
  const bytes = typeof manifestBytes === 'string' ? Buffer.from(manifestBytes, 'utf8') : manifestBytes;
  const signature = algorithm === 'ed25519' ? sign(null, bytes, key) : sign('sha256', bytes, { key, dsaEncoding: 'ieee-p1363' });
  return signature.toString('base64');
}

/** The public half of a private key (what `heliodor keys new` writes beside it). */
export function publicKeyOfPrivatePem(privateKeyPem: string): SigningPublicKey {
  const { key } = readPrivateKey(privateKeyPem);
  return parsePublicKeyPem(String(createPublicKey(key).export({ type: 'spki', format: 'pem' })));
}
