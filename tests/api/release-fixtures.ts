// Shared helpers for the signing-key, token, upload and release API tests (not a test file itself).
// Keys are made with node:crypto, manifests written by the same canonical form the CLI uses
// (RFC 8785 via the canonicalize package), and signatures made by node:crypto directly.
import crypto from 'node:crypto';
import fs from 'node:fs';
import type { Test } from 'supertest';
import { QueryTypes } from 'sequelize';
import canonicalize from 'canonicalize';
import type { TestApp } from '../helpers/app';
import { csrf } from '../helpers/app';
import { LoggerModel } from '../../server/db/models';

export type Algorithm = 'ed25519' | 'ecdsa-p256-sha256';
export type KeyPair = { algorithm: Algorithm; privatePem: string; publicPem: string; keyId: string };

/** A fresh signing key pair; key id per DEVICE_API.md: hex SHA-256 of the DER SPKI, first 16 characters. */
export function keyPair(algorithm: Algorithm = 'ed25519'): KeyPair {
  const pair = algorithm === 'ed25519' ? crypto.generateKeyPairSync('ed25519') : crypto.generateKeyPairSync('ec', { namedCurve: 'prime256v1' });
  const der = pair.publicKey.export({ type: 'spki', format: 'der' });
  return {
    algorithm,
    privatePem: String(pair.privateKey.export({ type: 'pkcs8', format: 'pem' })),
    publicPem: String(pair.publicKey.export({ type: 'spki', format: 'pem' })),
    keyId: crypto.createHash('sha256').update(der).digest('hex').slice(0, 16),
  };
}

/** Signature over the exact bytes: Ed25519 (RFC 8032) or ECDSA P-256/SHA-256 as raw r‖s (IEEE P1363), base64. */
export function signBytes(bytes: Buffer, key: KeyPair): string {
  const privateKey = crypto.createPrivateKey(key.privatePem);
  const sig = key.algorithm === 'ed25519' ? crypto.sign(null, bytes, privateKey) : crypto.sign('sha256', bytes, { key: privateKey, dsaEncoding: 'ieee-p1363' });
  return sig.toString('base64');
}

export type ManifestFields = {
  board_revisions: string[];
  format: number;
  image_sha256: string;
  image_size: number;
  issued_at: string;
  model: string;
  security_counter: number;
  version: string;
};

export type SignedUpload = { image: Buffer; manifest: Buffer; signature: string; fields: ManifestFields };

/** An image with its canonical manifest and signature; `override` changes manifest fields before signing. */
export function signedUpload(
  key: KeyPair,
  options: { model: string; version: string; boards?: string[]; counter?: number; image?: Buffer; override?: Partial<ManifestFields> },
): SignedUpload {
  const image = options.image ?? crypto.randomBytes(4096);
  const fields: ManifestFields = {
    board_revisions: options.boards ?? ['A', 'B', 'C'],
    format: 1,
    image_sha256: crypto.createHash('sha256').update(image).digest('hex'),
    image_size: image.length,
    issued_at: '2026-11-30T10:00:00Z',
    model: options.model,
    security_counter: options.counter ?? 1,
    version: options.version,
    ...options.override,
  };
  const manifest = Buffer.from(canonicalize(fields) as string, 'utf8');
  return { image, manifest, signature: signBytes(manifest, key), fields };
}

/** POST /api/releases as multipart: manifest as a file part, signature as a text field. */
export function postUpload(req: Test, upload: SignedUpload, extra: { notes?: string; channel?: string } = {}): Test {
  let r = req.attach('image', upload.image, { filename: 'fw.bin', contentType: 'application/octet-stream' });
  r = r.attach('manifest', upload.manifest, { filename: 'manifest.json', contentType: 'application/json' });
  r = r.field('signature', upload.signature);
  if (extra.notes !== undefined) r = r.field('notes', extra.notes);
  if (extra.channel !== undefined) r = r.field('channel', extra.channel);
  return r;
}

export async function demoModel() {
  const model = await LoggerModel.findOne({ where: { name: 'FL-2 field logger' } });
  if (!model) throw new Error('the demo seed has no FL-2 field logger');
  return model;
}

/** Every entry in the firmware store, hidden temporary files included. */
export const storeEntries = (t: TestApp) => fs.readdirSync(t.storeDir).sort();

export async function tableCount(t: TestApp, table: 'releases' | 'images' | 'release_transitions' | 'signing_keys' | 'api_tokens') {
  const [row] = await t.sequelize.query<{ n: number }>(`SELECT count(*)::int AS n FROM ${table}`, { type: QueryTypes.SELECT });
  return row.n;
}

/** Registers a public key as an admin and returns the key's console id. */
export async function registerKey(t: TestApp, key: KeyPair, name = `Key ${key.keyId}`): Promise<string> {
  const admin = await t.signedIn('admin', 'Key Admin');
  const res = await admin.post('/api/keys').set(csrf).send({ name, publicKeyPem: key.publicPem });
  if (res.status !== 201) throw new Error(`key registration failed: ${res.status} ${JSON.stringify(res.body)}`);
  return res.body.id;
}
