// Time-based one-time passwords (RFC 6238) through otplib: SHA-1, 6 digits, 30-second steps — what
// authenticator apps use. A code is accepted one step either side of now (clock drift), and never twice:
// the last accepted step is kept and later codes must be from a later step (replay).
import { generateSecret, generateURI, verify } from 'otplib';

export const totpPeriodS = 30;

/** A new shared secret: 20 random bytes (160 bits, RFC 4226 §4 asks for at least 128), in Base32. */
export function newTotpSecret(): string {
  return generateSecret({ length: 20 });
}

/** The otpauth:// URI an authenticator app reads from the QR code. */
export function totpUri(secret: string, account: string): string {
  return generateURI({ issuer: 'Heliodor', label: account, secret, algorithm: 'sha1', digits: 6, period: totpPeriodS });
}

/** The time step a code was made in, when it is right for `now` (±1 step) and later than `afterStep`; otherwise null. */
export async function checkTotp(secret: string, code: string, now: Date, afterStep: number | null): Promise<number | null> {
  const epoch = Math.floor(now.getTime() / 1000);
  const result = await verify({
    secret,
    token: code,
    epoch,
    period: totpPeriodS,
    digits: 6,
    algorithm: 'sha1',
    epochTolerance: totpPeriodS,
    ...(afterStep !== null ? { afterTimeStep: afterStep } : {}),
  }).catch(() => ({ valid: false as const }));
  if (!result.valid) return null;
  return 'timeStep' in result ? result.timeStep : Math.floor(epoch / totpPeriodS) + result.delta;
}
