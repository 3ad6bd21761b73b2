// The app configuration every in-process Heliodor in tests and the bench starts from: a fresh session
// secret, no demo and no mailbox unless asked, 16 MiB images, the device rate limit of a real fleet.
import crypto from 'node:crypto';
import type { AppDeps } from '../../server/app';

type AppConfig = AppDeps['config'];

export function appConfig(given: Pick<AppConfig, 'outboxDir' | 'storeDir' | 'webDir'> & Partial<AppConfig>): AppConfig {
  return {
    jwtSecret: crypto.randomBytes(32).toString('base64url'),
    dataKey: crypto.randomBytes(32).toString('base64url'),
    demo: false,
    devMailbox: false,
    production: false,
    publicUrl: undefined,
    imageLimitBytes: 16 * 1024 * 1024,
    deviceRatePerMinute: 60,
    ...given,
  };
}
