// Bearer tokens for loggers (hlt_) and automation (hat_): 32 random bytes in base64url (43 characters)
// after the prefix, shown once, stored only as the SHA-256 digest (hex).
import crypto from 'node:crypto';

// One-time links use the same shape: hiv_ (invitations) and hpr_ (password resets).
export type TokenPrefix = 'hlt_' | 'hat_' | 'hiv_' | 'hpr_';

export const tokenPattern = (prefix: TokenPrefix) => new RegExp(`^${prefix}[A-Za-z0-9_-]{43}$`);

export function digestToken(token: string): string {
  return crypto.createHash('sha256').update(token, 'utf8').digest('hex');
}

export function newToken(prefix: TokenPrefix, random: (n: number) => Buffer = crypto.randomBytes) {
  const token = prefix + random(32).toString('base64url');
  return { token, digest: digestToken(token) };
}

/** Constant-time comparison of two hex digests of equal length. */
export function sameDigest(a: string, b: string): boolean {
  const x = Buffer.from(a, 'hex');
  const y = Buffer.from(b, 'hex');
  return x.length === y.length && crypto.timingSafeEqual(x, y);
}
