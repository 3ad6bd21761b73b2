import crypto from 'node:crypto';
import jwt from 'jsonwebtoken';
import { signSession, verifySession } from '../../server/auth/session';

const secret = 'x'.repeat(43);
const userId = crypto.randomUUID();
const sessionId = crypto.randomUUID();
const inAnHour = () => new Date(Date.now() + 3_600_000);
const base = { issuer: 'heliodor', audience: 'heliodor-console' } as const;

describe('session tokens (RFC 7519 / RFC 8725)', () => {
  test('when a session is signed, then it verifies with its person (sub), its server-side session (sid) and its expiry', () => {
    const expiresAt = inAnHour();
    const token = signSession(secret, userId, sessionId, expiresAt);
    expect(verifySession(secret, token)).toEqual({ sub: userId, sid: sessionId, typ: 'session', exp: Math.floor(expiresAt.getTime() / 1000) });
  });

  test('when the algorithm is "none", then it is refused (RFC 8725 §2.1, §3.1 algorithm pinning)', () => {
    const unsigned = jwt.sign({ typ: 'session', sid: sessionId }, '', { algorithm: 'none', subject: userId, expiresIn: 3600, ...base });
    expect(verifySession(secret, unsigned)).toBeNull();
  });

  test('when the audience or issuer is wrong, then it is refused (RFC 7519 §4.1.3)', () => {
    const wrongAud = jwt.sign({ typ: 'session', sid: sessionId }, secret, { algorithm: 'HS256', subject: userId, issuer: 'heliodor', audience: 'other', expiresIn: 3600 });
    const wrongIss = jwt.sign({ typ: 'session', sid: sessionId }, secret, { algorithm: 'HS256', subject: userId, issuer: 'other', audience: 'heliodor-console', expiresIn: 3600 });
    expect(verifySession(secret, wrongAud)).toBeNull();
    expect(verifySession(secret, wrongIss)).toBeNull();
  });

  test('when the token has expired, then it is refused (RFC 7519 §4.1.4)', () => {
    const old = jwt.sign({ typ: 'session', sid: sessionId, exp: Math.floor(Date.now() / 1000) - 3600 }, secret, { algorithm: 'HS256', subject: userId, ...base });
    expect(verifySession(secret, old)).toBeNull();
  });

  test('when the token has no expiry at all, then it is refused (RFC 7519 §4.1.4: a session must end)', () => {
    const forever = jwt.sign({ typ: 'session', sid: sessionId }, secret, { algorithm: 'HS256', subject: userId, ...base });
    expect(jwt.decode(forever)).not.toHaveProperty('exp');
    expect(verifySession(secret, forever)).toBeNull();
  });

  test('when the subject or session id is not an identifier, then it is refused before any lookup', () => {
    const oddSub = jwt.sign({ typ: 'session', sid: sessionId }, secret, { algorithm: 'HS256', subject: 'x', expiresIn: 3600, ...base });
    const oddSid = jwt.sign({ typ: 'session', sid: "1' OR '1'='1" }, secret, { algorithm: 'HS256', subject: userId, expiresIn: 3600, ...base });
    expect(verifySession(secret, oddSub)).toBeNull();
    expect(verifySession(secret, oddSid)).toBeNull();
  });

  test('when the token is of another kind (typ) or signed with another key, then it is refused (RFC 8725 §3.11)', () => {
    const other = jwt.sign({ typ: 'device', sid: sessionId }, secret, { algorithm: 'HS256', subject: userId, expiresIn: 3600, ...base });
    expect(verifySession(secret, other)).toBeNull();
    expect(verifySession('y'.repeat(43), signSession(secret, userId, sessionId, inAnHour()))).toBeNull();
  });
});
