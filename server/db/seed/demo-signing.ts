// The demo's signing key and firmware images. Demo mode only: a release engineer normally signs
// offline and the console never holds a private key. For the demo, the seed makes an Ed25519 key,
// keeps its private half in the data folder (<HELIODOR_DATA>/demo/signing-key.private.pem, mode
// 0600, never in git) so the fleet simulator and the `heliodor` CLI can sign more releases, and
// registers the public half as an active signing key.
import { createHash, generateKeyPairSync } from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import { Readable } from 'node:stream';
import { canonicalManifest, parsePublicKeyPem, signManifest, type SigningPublicKey } from '../../images/manifest';
import { LocalImageStore } from '../../images/store';

export type DemoKey = { privateKeyPem: string; publicKey: SigningPublicKey; privateKeyFile: string; publicKeyFile: string };

export function demoKeyFiles(dataDir: string) {
  const dir = path.join(dataDir, 'demo');
  return { dir, privateKeyFile: path.join(dir, 'signing-key.private.pem'), publicKeyFile: path.join(dir, 'signing-key.public.pem') };
}

/** Makes the demo key pair and writes both halves to the data folder (the private half with mode 0600). */
export function createDemoKey(dataDir: string): DemoKey {
  const { dir, privateKeyFile, publicKeyFile } = demoKeyFiles(dataDir);
  const pair = generateKeyPairSync('ed25519');
  const privateKeyPem = String(pair.privateKey.export({ type: 'pkcs8', format: 'pem' }));
  const publicKey = parsePublicKeyPem(String(pair.publicKey.export({ type: 'spki', format: 'pem' })));
  fs.mkdirSync(dir, { recursive: true, mode: 0o700 });
  // A database seeded afresh gets a fresh key: the files of an earlier seed are replaced.
  fs.writeFileSync(privateKeyFile, privateKeyPem, { mode: 0o600 });
  fs.chmodSync(privateKeyFile, 0o600);
  fs.writeFileSync(publicKeyFile, publicKey.pem, { mode: 0o644 });
  return { privateKeyPem, publicKey, privateKeyFile, publicKeyFile };
}

/**
 * A small stand-in firmware image for a version: a readable header and then bytes drawn from a
 * SHA-256 chain, so every version has its own content (and digest) and the same version always the same.
 */
export function demoImage(modelName: string, version: string, size = 48 * 1024): Buffer {
  const header = Buffer.from(`Heliodor demo image\n${modelName}\nfirmware ${version}\n\n`, 'utf8');
  const out = Buffer.alloc(size);
  header.copy(out, 0);
  let block = createHash('sha256').update(`${modelName}/${version}`).digest();
  for (let at = header.length; at < size; at += block.length) {
    block.copy(out, at, 0, Math.min(block.length, size - at));
    block = createHash('sha256').update(block).digest();
  }
  return out;
}

/** Puts an image into the firmware store under its SHA-256, the way an upload does. */
export async function storeImage(storeDir: string, bytes: Buffer): Promise<{ sha256: string; size: number }> {
  const store = new LocalImageStore(storeDir);
  const received = await store.receive(Readable.from([bytes])).done;
  await received.commit();
  return { sha256: received.sha256, size: received.size };
}

export type SignedRelease = { manifest: Buffer; signature: Buffer };

/** The RFC 8785 canonical manifest for an image and its Ed25519 signature by the demo key. */
export function signDemoManifest(
  key: DemoKey,
  fields: { modelId: string; version: string; boards: string[]; securityCounter: number; image: { sha256: string; size: number }; issuedAt: Date },
): SignedRelease {
  const text = canonicalManifest({
    board_revisions: fields.boards,
    format: 1,
    image_sha256: fields.image.sha256,
    image_size: fields.image.size,
    issued_at: fields.issuedAt.toISOString().replace(/\.\d{3}Z$/, 'Z'),
    model: fields.modelId,
    security_counter: fields.securityCounter,
    version: fields.version,
  });
  const manifest = Buffer.from(text, 'utf8');
  return { manifest, signature: Buffer.from(signManifest(manifest, key.privateKeyPem), 'base64') };
}
