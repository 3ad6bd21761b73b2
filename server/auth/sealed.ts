// Secrets the server must read back (second-factor secrets) are stored sealed with AES-256-GCM under a
// key kept outside the database ($HELIODOR_DATA/secrets/data-key or HELIODOR_DATA_KEY), never in clear.
// Sealed text: "v1." + base64url(12-byte nonce ‖ ciphertext ‖ 16-byte tag). The row's purpose is bound in
// as additional data, so a sealed value cannot be moved to another column or person.
import crypto from 'node:crypto';

/** HKDF-SHA-256 (RFC 5869) from the data key, so the key file's text is never used as the key itself. */
const deriveKey = (dataKey: string) => Buffer.from(crypto.hkdfSync('sha256', dataKey, 'heliodor', 'sealed secrets v1', 32));

export function seal(dataKey: string, plain: string, context: string): string {
  const nonce = crypto.randomBytes(12);
  const cipher = crypto.createCipheriv('aes-256-gcm', deriveKey(dataKey), nonce);
  cipher.setAAD(Buffer.from(context, 'utf8'));
  const body = Buffer.concat([cipher.update(plain, 'utf8'), cipher.final()]);
  return `v1.${Buffer.concat([nonce, body, cipher.getAuthTag()]).toString('base64url')}`;
}

export function unseal(dataKey: string, sealed: string, context: string): string {
  if (!sealed.startsWith('v1.')) throw new Error('unknown sealed format');
  const raw = Buffer.from(sealed.slice(3), 'base64url');
  const nonce = raw.subarray(0, 12);
  const tag = raw.subarray(raw.length - 16);
  const decipher = crypto.createDecipheriv('aes-256-gcm', deriveKey(dataKey), nonce);
  decipher.setAAD(Buffer.from(context, 'utf8'));
  decipher.setAuthTag(tag);
  return Buffer.concat([decipher.update(raw.subarray(12, raw.length - 16)), decipher.final()]).toString('utf8');
}
