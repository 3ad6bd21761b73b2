import bcrypt from 'bcryptjs';
import { passwordSchema, utf8Bytes } from '../../schemas/auth';
import { bcryptCost, checkPassword, costOf, decoyHash, hashPassword, passwordWork, stopPasswordWorkers } from '../../server/auth/passwords';
import { commonPasswordCount, isCommonPassword } from '../../server/auth/common-passwords';

afterAll(() => stopPasswordWorkers());

describe('passwords (OWASP Password Storage Cheat Sheet, docs/SOURCES.md §12)', () => {
  test('when hashing, then the bcrypt work factor is at least 10', async () => {
    expect(bcryptCost(false)).toBeGreaterThanOrEqual(10);
    expect(bcryptCost(true)).toBeGreaterThanOrEqual(10);
    const hash = await hashPassword('fernhollow-demo', bcryptCost(false));
    expect(hash).toMatch(/^\$2[aby]\$1\d\$/);
    expect(costOf(hash)).toBe(bcryptCost(false));
    expect(await checkPassword('fernhollow-demo', hash)).toBe(true);
    expect(await checkPassword('fernhollow-dem0', hash)).toBe(false);
  });

  test('when a hash is made in the worker threads, then bcryptjs itself (a reference other than the pool) verifies it', async () => {
    const hash = await hashPassword('aldmere vale pump house', 10);
    expect(bcrypt.compareSync('aldmere vale pump house', hash)).toBe(true);
  });

  test('when passwords are hashed and checked, then bcrypt never runs on the main thread (the event loop stays free)', async () => {
    const onMain = [jest.spyOn(bcrypt, 'hash'), jest.spyOn(bcrypt, 'compare'), jest.spyOn(bcrypt, 'hashSync'), jest.spyOn(bcrypt, 'compareSync')];
    const hash = await hashPassword('brackenford mill race', 10);
    expect(await checkPassword('brackenford mill race', hash)).toBe(true);
    for (const spy of onMain) expect(spy).not.toHaveBeenCalled();
    onMain.forEach((s) => s.mockRestore());
  });

  test('when the decoy for unknown addresses is made, then it has the same work factor as real hashes (production 12, not 10)', async () => {
    expect(costOf(await decoyHash(bcryptCost(true)))).toBe(12);
    expect(costOf(await decoyHash(bcryptCost(false)))).toBe(10);
    // Checking against the decoy is one bcrypt comparison at that cost, as for a real person.
    const before = passwordWork.compares.get(12) ?? 0;
    expect(await checkPassword('anything at all here', await decoyHash(12))).toBe(false);
    expect(passwordWork.compares.get(12)).toBe(before + 1);
  });

  test('when the workers stop while a decoy is still being computed, then nothing is left to reject unheard', async () => {
    const unheard: unknown[] = [];
    const onUnhandled = (reason: unknown) => unheard.push(reason);
    process.on('unhandledRejection', onUnhandled);
    try {
      void decoyHash(13); // a cost nothing else uses, so it is surely still running
      await stopPasswordWorkers();
      await new Promise((r) => setTimeout(r, 50));
      expect(unheard).toEqual([]);
    } finally {
      process.off('unhandledRejection', onUnhandled);
    }
  });
});

// OWASP Application Security Verification Standard 4.0.3, §2.1 Password Security.
describe('new passwords follow OWASP ASVS 4.0 §2.1', () => {
  test('when shorter than 12 characters, then refused (ASVS 4.0 §2.1.1)', () => {
    expect(passwordSchema.safeParse('short').success).toBe(false);
    expect(passwordSchema.safeParse('elevenchars').success).toBe(false);
    expect(passwordSchema.safeParse('twelve chars').success).toBe(true);
  });

  test('when 64 characters or longer, then still permitted up to what bcrypt reads (ASVS 4.0 §2.1.2; OWASP cheat sheet: 72 bytes)', () => {
    expect(passwordSchema.safeParse('a'.repeat(64)).success).toBe(true);
    expect(passwordSchema.safeParse('a'.repeat(72)).success).toBe(true);
    expect(passwordSchema.safeParse('a'.repeat(73)).success).toBe(false);
    // 24 characters but 72 bytes: each "€" is 3 bytes in UTF-8
    expect(passwordSchema.safeParse('€'.repeat(24)).success).toBe(true);
    expect(passwordSchema.safeParse('€'.repeat(25)).success).toBe(false);
  });

  test('when bytes are counted, then they agree with Node\'s own UTF-8 encoder (RFC 3629: 1 to 4 bytes per code point)', () => {
    for (const s of ['plain ascii', 'Sonnenstrom über Aldmere', '€uro', 'sun ☀️ and 🌞', 'lone \ud800 half']) {
      expect(utf8Bytes(s)).toBe(Buffer.byteLength(s, 'utf8'));
    }
  });

  test('when the password has spaces, Unicode or emoji, then it is accepted as typed (ASVS 4.0 §2.1.4)', () => {
    expect(passwordSchema.safeParse('  panel on the roof  ').data).toBe('  panel on the roof  ');
    expect(passwordSchema.safeParse('Sonnenstrom ☀️ über Aldmere').success).toBe(true);
  });

  test('when the password has no digits, capitals or symbols, then that alone is no reason to refuse it (ASVS 4.0 §2.1.9: no composition rules)', () => {
    expect(passwordSchema.safeParse('correct horse battery').success).toBe(true);
    expect(isCommonPassword('correct horse battery')).toBe(false);
  });

  test('when the password is on the shipped list of common passwords, in any case, then it is refused (ASVS 4.0 §2.1.7)', () => {
    // The list is @zxcvbn-ts/language-common's "passwords-common" dictionary (MIT), shipped in node_modules.
    expect(commonPasswordCount()).toBeGreaterThan(40_000);
    for (const common of ['1qaz2wsx3edc', 'qwerty123456', 'leavemealone', 'LeaveMeAlone', '123456789qwe']) {
      expect(passwordSchema.safeParse(common).success).toBe(true); // long enough …
      expect(isCommonPassword(common)).toBe(true); // … but common
    }
    expect(isCommonPassword('hollins dairy solar 2024')).toBe(false);
  });
});
