// Session tokens: HS256 JWTs (RFC 7519) with algorithm, issuer, audience and expiry checked (RFC 8725).
import jwt from 'jsonwebtoken';
import type { Role } from '../../schemas/auth';

export const sessionCookie = 'heliodor_session';
export const sessionTtlSeconds = 12 * 60 * 60;
const issuer = 'heliodor';
const audience = 'heliodor-console';

export type SessionClaims = { sub: string; role: Role; typ: 'session' };

export function signSession(secret: string, userId: string, role: Role): string {
  return jwt.sign({ role, typ: 'session' }, secret, {
    algorithm: 'HS256',
    subject: userId,
    issuer,
    audience,
    expiresIn: sessionTtlSeconds,
  });
}

export function verifySession(secret: string, token: string): SessionClaims | null {
  try {
    const claims = jwt.verify(token, secret, { algorithms: ['HS256'], issuer, audience, clockTolerance: 30 });
    if (typeof claims !== 'object' || claims.typ !== 'session' || typeof claims.sub !== 'string') return null;
    return { sub: claims.sub, role: claims.role as Role, typ: 'session' };
  } catch {
    return null;
  }
}
