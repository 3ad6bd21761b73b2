// Session tokens: HS256 JWTs (RFC 7519) with algorithm, issuer, audience and expiry checked (RFC 8725).
// The token names a server-side session (sid) of a person (sub); the session row decides whether it
// still counts, so signing out, disabling or a role change ends it at the next request.
import jwt from 'jsonwebtoken';

export const sessionCookie = 'heliodor_session';
export const sessionTtlSeconds = 12 * 60 * 60;
/** Between the password and the second-factor code. */
export const pendingSessionTtlSeconds = 5 * 60;
const issuer = 'heliodor';
const audience = 'heliodor-console';
const uuidPattern = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/;

export type SessionClaims = { sub: string; sid: string; typ: 'session'; exp: number };

export function signSession(secret: string, userId: string, sessionId: string, expiresAt: Date): string {
  return jwt.sign({ typ: 'session', sid: sessionId, exp: Math.floor(expiresAt.getTime() / 1000) }, secret, {
    algorithm: 'HS256',
    subject: userId,
    issuer,
    audience,
  });
}

/**
 * The claims of a well-formed, unexpired session token, or null. A token without `exp` never counts
 * (RFC 7519 §4.1.4). Expiry is judged by the app's clock, the same clock the session rows are kept by.
 */
export function verifySession(secret: string, token: string, now: Date = new Date()): SessionClaims | null {
  try {
    const claims = jwt.verify(token, secret, { algorithms: ['HS256'], issuer, audience, clockTolerance: 30, clockTimestamp: Math.floor(now.getTime() / 1000) });
    if (typeof claims !== 'object' || claims.typ !== 'session') return null;
    if (typeof claims.exp !== 'number') return null;
    if (typeof claims.sub !== 'string' || !uuidPattern.test(claims.sub)) return null;
    if (typeof claims.sid !== 'string' || !uuidPattern.test(claims.sid)) return null;
    return { sub: claims.sub, sid: claims.sid, typ: 'session', exp: claims.exp };
  } catch {
    return null;
  }
}
