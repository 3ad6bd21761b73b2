import { digestToken, newToken, sameDigest, tokenPattern } from '../../server/auth/tokens';

describe('bearer tokens', () => {
  test('when a logger token is issued, then it is hlt_ + 43 base64url characters (32 random bytes) and its digest is SHA-256 hex', () => {
    const { token, digest } = newToken('hlt_');
    expect(token).toMatch(tokenPattern('hlt_'));
    expect(Buffer.from(token.slice(4), 'base64url')).toHaveLength(32);
    expect(digest).toMatch(/^[0-9a-f]{64}$/);
    expect(digest).toBe(digestToken(token));
  });

  test('when digests are computed, then they match FIPS 180-4 SHA-256 values (NIST "abc" and CAVP empty message)', () => {
    // Source: docs/SOURCES.md §3 (NIST one-block example; CAVP SHA256ShortMsg Len = 0)
    expect(digestToken('abc')).toBe('ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad');
    expect(digestToken('')).toBe('e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855');
  });

  test('when two tokens are issued, then they differ', () => {
    expect(newToken('hat_').token).not.toBe(newToken('hat_').token);
  });

  test('when digests are compared, then only equal digests match', () => {
    const a = digestToken('a');
    expect(sameDigest(a, digestToken('a'))).toBe(true);
    expect(sameDigest(a, digestToken('b'))).toBe(false);
    expect(sameDigest(a, 'abcd')).toBe(false);
  });
});
