import { passwordSchema } from '../../schemas/auth';
import { bcryptCost, checkPassword, hashPassword } from '../../server/auth/passwords';

describe('passwords (OWASP Password Storage Cheat Sheet, docs/SOURCES.md §12)', () => {
  test('when hashing, then the bcrypt work factor is at least 10', async () => {
    expect(bcryptCost(false)).toBeGreaterThanOrEqual(10);
    expect(bcryptCost(true)).toBeGreaterThanOrEqual(10);
    const hash = await hashPassword('fernhollow-demo', bcryptCost(false));
    expect(hash).toMatch(/^\$2[aby]\$1\d\$/);
    expect(await checkPassword('fernhollow-demo', hash)).toBe(true);
    expect(await checkPassword('fernhollow-dem0', hash)).toBe(false);
  });

  test('when a new password is chosen, then it must be 12 to 72 bytes counted in UTF-8', () => {
    expect(passwordSchema.safeParse('short').success).toBe(false);
    expect(passwordSchema.safeParse('a'.repeat(12)).success).toBe(true);
    expect(passwordSchema.safeParse('a'.repeat(72)).success).toBe(true);
    expect(passwordSchema.safeParse('a'.repeat(73)).success).toBe(false);
    // 24 characters but 72 bytes: each "€" is 3 bytes in UTF-8
    expect(passwordSchema.safeParse('€'.repeat(24)).success).toBe(true);
    expect(passwordSchema.safeParse('€'.repeat(25)).success).toBe(false);
  });
});
