import crypto from 'node:crypto';
import { seal, unseal } from '../../server/auth/sealed';

describe('sealed secrets (AES-256-GCM with a key derived by HKDF)', () => {
  const key = crypto.randomBytes(32).toString('base64url');
  const secret = 'JBSWY3DPEHPK3PXPJBSWY3DPEHPK3PXP';

  test('when a second-factor secret is sealed, then the stored text does not contain it and unseals to it', () => {
    const sealed = seal(key, secret, 'totp:u1');
    expect(sealed).toMatch(/^v1\.[A-Za-z0-9_-]+$/);
    expect(sealed).not.toContain(secret);
    expect(Buffer.from(sealed.slice(3), 'base64url').toString('latin1')).not.toContain(secret);
    expect(unseal(key, sealed, 'totp:u1')).toBe(secret);
    expect(seal(key, secret, 'totp:u1')).not.toBe(sealed); // a fresh nonce each time
  });

  test('when the sealed text is altered, moved to another person, or opened with another key, then it does not open (GCM authentication)', () => {
    const sealed = seal(key, secret, 'totp:u1');
    const raw = Buffer.from(sealed.slice(3), 'base64url');
    raw[14] ^= 1;
    expect(() => unseal(key, `v1.${raw.toString('base64url')}`, 'totp:u1')).toThrow();
    expect(() => unseal(key, sealed, 'totp:u2')).toThrow();
    expect(() => unseal(crypto.randomBytes(32).toString('base64url'), sealed, 'totp:u1')).toThrow();
  });
});
