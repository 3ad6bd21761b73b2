// Abuse limits for sign-in, password-reset and second-factor attempts, per account and per IP address.
// Counters live in PostgreSQL (attempt_counters), so every Heliodor process shares them. Each attempt is
// counted before any password or code is checked (one atomic upsert per key), so parallel attempts cannot
// slip past the limit; a successful attempt gives its count back.
import { QueryTypes, type Sequelize } from 'sequelize';
import { Problem } from '../http/problem';

export type Limit = { name: string; max: number; windowS: number };

/** OWASP ASVS 4.0 §2.2.1 asks for anti-automation; these are Heliodor's own numbers. */
export const limits = {
  signInAccount: { name: 'sign-in:account', max: 10, windowS: 15 * 60 },
  signInIp: { name: 'sign-in:ip', max: 50, windowS: 15 * 60 },
  resetAccount: { name: 'reset:account', max: 5, windowS: 60 * 60 },
  resetIp: { name: 'reset:ip', max: 20, windowS: 60 * 60 },
  secondFactorAccount: { name: 'second-factor:account', max: 5, windowS: 15 * 60 },
  secondFactorIp: { name: 'second-factor:ip', max: 30, windowS: 15 * 60 },
} as const satisfies Record<string, Limit>;

export type Attempt = { key: string; limit: Limit };

export const attemptOn = (limit: Limit, subject: string): Attempt => ({ key: `${limit.name}:${subject.toLowerCase()}`, limit });

export function tooManyAttempts(retryAfterS: number, what: string): Problem {
  return new Problem(429, 'too-many-attempts', 'Too many attempts', `Too many ${what} attempts. Wait ${retryAfterS} s before trying again.`, {
    headers: { 'Retry-After': String(retryAfterS) },
    extensions: { retryAfter: retryAfterS },
  });
}

/**
 * Counts one attempt on each key (a window starts with the first attempt and lasts `windowS`); throws a
 * 429 problem with Retry-After when any key is past its limit. Returns the attempts so a success can give them back.
 */
export async function countAttempt(sequelize: Sequelize, attempts: Attempt[], now: Date, what: string): Promise<Attempt[]> {
  let retryAfterS = 0;
  for (const a of attempts) {
    const [row] = await sequelize.query<{ count: number; window_ends: Date }>(
      `INSERT INTO attempt_counters (key, count, window_ends) VALUES (:key, 1, :ends)
       ON CONFLICT (key) DO UPDATE SET
         count = CASE WHEN attempt_counters.window_ends <= :now THEN 1 ELSE attempt_counters.count + 1 END,
         window_ends = CASE WHEN attempt_counters.window_ends <= :now THEN EXCLUDED.window_ends ELSE attempt_counters.window_ends END
       RETURNING count, window_ends`,
      { type: QueryTypes.SELECT, replacements: { key: a.key, now, ends: new Date(now.getTime() + a.limit.windowS * 1000) } },
    );
    if (row.count > a.limit.max) retryAfterS = Math.max(retryAfterS, Math.max(1, Math.ceil((new Date(row.window_ends).getTime() - now.getTime()) / 1000)));
  }
  if (retryAfterS > 0) throw tooManyAttempts(retryAfterS, what);
  return attempts;
}

/** A successful attempt: the account's count starts over, and the address's count gives this attempt back. */
export async function attemptSucceeded(sequelize: Sequelize, account: Attempt, others: Attempt[]) {
  await sequelize.query('DELETE FROM attempt_counters WHERE key = :key', { replacements: { key: account.key } });
  for (const a of others) {
    await sequelize.query('UPDATE attempt_counters SET count = greatest(count - 1, 0) WHERE key = :key', { replacements: { key: a.key } });
  }
}
