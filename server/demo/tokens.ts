// The demo loggers' tokens. Demo mode only: a real logger's token is 32 random bytes shown once. The
// demo seed derives each demo logger's token from its serial and a demo secret of the data folder
// (`<data>/secrets/demo-logger-tokens`, mode 0600, made on first use like the JWT secret):
//
//   token = "hlt_" + base64url(HMAC-SHA256(secret, "heliodor demo logger token\0" + serial))
//
// so the living demo (live.ts) can check in as those loggers after any restart, while the database
// holds only each token's SHA-256 as for any logger, and no token is logged. A person who rotates a
// demo logger's token in the console gets a random one as usual; the living demo then lets that
// logger go (its derived token no longer matches), as a logger in the field would fall silent.
import { createHmac } from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import { readSecret } from '../config';
import { digestToken } from '../auth/tokens';

export const DEMO_TOKEN_SECRET = 'demo-logger-tokens';

/** The demo token of a serial under a secret (43 base64url characters after the prefix, as newToken makes). */
export function demoLoggerToken(secret: string, serial: string): string {
  return `hlt_${createHmac('sha256', secret).update(`heliodor demo logger token\0${serial}`).digest('base64url')}`;
}

/** Tokens for the seed: the secret is made on first use. */
export function demoTokenIssuer(dataDir: string): (serial: string) => { token: string; digest: string } {
  const secret = readSecret(dataDir, DEMO_TOKEN_SECRET);
  return (serial) => {
    const token = demoLoggerToken(secret, serial);
    return { token, digest: digestToken(token) };
  };
}

/** The secret if a demo seed made one in this data folder, else null (nothing is created). */
export function existingDemoSecret(dataDir: string): string | null {
  const file = path.join(dataDir, 'secrets', DEMO_TOKEN_SECRET);
  return fs.existsSync(file) ? fs.readFileSync(file, 'utf8').trim() || null : null;
}
