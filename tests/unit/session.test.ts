import jwt from 'jsonwebtoken';
import { signSession, verifySession } from '../../server/auth/session';

const secret = 'x'.repeat(43);

describe('session tokens (RFC 7519 / RFC 8725)', () => {
  test('when a session is signed, then it verifies with its subject and role', () => {
    const token = signSession(secret, 'u1', 'support');
    expect(verifySession(secret, token)).toEqual({ sub: 'u1', role: 'support', typ: 'session' });
  });

  test('when the algorithm is "none", then it is refused (RFC 8725 §2.1, §3.1 algorithm pinning)', () => {
    const unsigned = jwt.sign({ role: 'admin', typ: 'session' }, '', { algorithm: 'none', subject: 'u1', issuer: 'heliodor', audience: 'heliodor-console' });
    expect(verifySession(secret, unsigned)).toBeNull();
  });

  test('when the audience or issuer is wrong, then it is refused (RFC 7519 §4.1.3)', () => {
    const wrongAud = jwt.sign({ role: 'admin', typ: 'session' }, secret, { algorithm: 'HS256', subject: 'u1', issuer: 'heliodor', audience: 'other' });
    const wrongIss = jwt.sign({ role: 'admin', typ: 'session' }, secret, { algorithm: 'HS256', subject: 'u1', issuer: 'other', audience: 'heliodor-console' });
    expect(verifySession(secret, wrongAud)).toBeNull();
    expect(verifySession(secret, wrongIss)).toBeNull();
  });

  test('when the token has expired, then it is refused (RFC 7519 §4.1.4)', () => {
    const old = jwt.sign({ role: 'admin', typ: 'session', exp: Math.floor(Date.now() / 1000) - 3600 }, secret, { algorithm: 'HS256', subject: 'u1', issuer: 'heliodor', audience: 'heliodor-console' });
    expect(verifySession(secret, old)).toBeNull();
  });

  test('when the token is of another kind (typ) or signed with another key, then it is refused (RFC 8725 §3.11)', () => {
    const other = jwt.sign({ role: 'admin', typ: 'device' }, secret, { algorithm: 'HS256', subject: 'u1', issuer: 'heliodor', audience: 'heliodor-console' });
    expect(verifySession(secret, other)).toBeNull();
    expect(verifySession('y'.repeat(43), signSession(secret, 'u1', 'admin'))).toBeNull();
  });
});
