import bcrypt from 'bcryptjs';

/** OWASP Password Storage Cheat Sheet: bcrypt work factor 10 or more. */
export const bcryptCost = (production: boolean) => (production ? 12 : 10);

export function hashPassword(password: string, cost: number): Promise<string> {
  return bcrypt.hash(password, cost);
}

export function checkPassword(password: string, hash: string): Promise<boolean> {
  return bcrypt.compare(password, hash);
}

// A valid hash to compare against when the e-mail is unknown, so both failures take the same time.
export const decoyHash = bcrypt.hashSync('heliodor-decoy-password', 10);
