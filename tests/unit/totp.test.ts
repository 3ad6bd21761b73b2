import { generateSync } from 'otplib';
import { checkTotp, newTotpSecret, totpUri } from '../../server/auth/totp';
import { base32Decode, hotp, totp } from '../helpers/totp';

const ascii = (s: string) => Buffer.from(s, 'ascii');
// RFC 6238 Appendix B: the seeds are these ASCII strings (20, 32 and 64 bytes for SHA-1, SHA-256, SHA-512).
const seeds = {
  sha1: ascii('12345678901234567890'),
  sha256: ascii('12345678901234567890123456789012'),
  sha512: ascii('1234567890123456789012345678901234567890123456789012345678901234'),
};

// RFC 6238 Appendix B (Test Vectors), the table of TOTP values with T0 = 0, X = 30 and 8 digits.
const appendixB: [number, string, string, string][] = [
  [59, '94287082', '46119246', '90693936'],
  [1111111109, '07081804', '68084774', '25091201'],
  [1111111111, '14050471', '67062674', '99943326'],
  [1234567890, '89005924', '91819424', '93441116'],
  [2000000000, '69279037', '90698825', '38618901'],
  [20000000000, '65353130', '77737706', '47863826'],
];

describe('TOTP codes from otplib (RFC 6238)', () => {
  test.each(appendixB)('when the time is %i s, then otplib gives the RFC 6238 Appendix B codes for SHA-1, SHA-256 and SHA-512', (t, sha1, sha256, sha512) => {
    expect(generateSync({ secret: new Uint8Array(seeds.sha1), epoch: t, digits: 8, algorithm: 'sha1' })).toBe(sha1);
    expect(generateSync({ secret: new Uint8Array(seeds.sha256), epoch: t, digits: 8, algorithm: 'sha256' })).toBe(sha256);
    expect(generateSync({ secret: new Uint8Array(seeds.sha512), epoch: t, digits: 8, algorithm: 'sha512' })).toBe(sha512);
  });

  test('when a code is checked, then Heliodor accepts the RFC 6238 Appendix B SHA-1 code (its last 6 digits, as apps show) within one step either side', async () => {
    // The app's 6-digit code is the 8-digit value modulo 10^6 (RFC 4226 §5.3), i.e. its last six digits.
    const secret = 'GEZDGNBVGY3TQOJQGEZDGNBVGY3TQOJQ'; // Base32 of "12345678901234567890" (RFC 4648)
    expect(base32Decode(secret)).toEqual(seeds.sha1);
    const at = new Date(1111111109 * 1000);
    const code = '081804'; // Appendix B: 07081804 at T = 1111111109
    const step = Math.floor(1111111109 / 30);
    await expect(checkTotp(secret, code, at, null)).resolves.toBe(step);
    await expect(checkTotp(secret, code, new Date(at.getTime() + 30_000), null)).resolves.toBe(step);
    await expect(checkTotp(secret, code, new Date(at.getTime() - 30_000), null)).resolves.toBe(step);
    await expect(checkTotp(secret, code, new Date(at.getTime() + 61_000), null)).resolves.toBeNull();
  });

  test('when a code of a step already used is given again, then it is refused (no replay)', async () => {
    const secret = newTotpSecret();
    const now = new Date();
    const code = totp(base32Decode(secret), now.getTime() / 1000);
    const step = await checkTotp(secret, code, now, null);
    expect(step).not.toBeNull();
    await expect(checkTotp(secret, code, now, step)).resolves.toBeNull();
    const otherDigits = code.replace(/\d/g, (d) => String((Number(d) + 1) % 10));
    await expect(checkTotp(secret, otherDigits, now, null)).resolves.toBeNull();
  });

  test('when a secret is made, then it is 20 random bytes in Base32 and the otpauth URI names Heliodor, the account, SHA1, 6 digits and 30 s', () => {
    const a = newTotpSecret();
    expect(base32Decode(a)).toHaveLength(20);
    expect(newTotpSecret()).not.toBe(a);
    const uri = new URL(totpUri(a, 'priya@fernhollow.example'));
    expect(uri.protocol).toBe('otpauth:');
    expect(decodeURIComponent(uri.pathname)).toContain('Heliodor:priya@fernhollow.example');
    expect(uri.searchParams.get('secret')).toBe(a);
    expect(uri.searchParams.get('issuer')).toBe('Heliodor');
    expect(uri.searchParams.get('algorithm') ?? 'SHA1').toBe('SHA1');
    expect(uri.searchParams.get('digits') ?? '6').toBe('6');
    expect(uri.searchParams.get('period') ?? '30').toBe('30');
  });
});

describe('the tests\' own reference code generator (node:crypto HMAC, not otplib)', () => {
  test('when counted from 0 to 9, then it gives the RFC 4226 Appendix D HOTP values', () => {
    const expected = ['755224', '287082', '359152', '969429', '338314', '254676', '287922', '162583', '399871', '520489'];
    expect(expected.map((_, i) => hotp(seeds.sha1, BigInt(i)))).toEqual(expected);
  });

  test.each(appendixB)('when the time is %i s, then it gives the RFC 6238 Appendix B codes', (t, sha1, sha256, sha512) => {
    expect(totp(seeds.sha1, t, 8, 'sha1')).toBe(sha1);
    expect(totp(seeds.sha256, t, 8, 'sha256')).toBe(sha256);
    expect(totp(seeds.sha512, t, 8, 'sha512')).toBe(sha512);
  });
});
