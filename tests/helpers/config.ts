// The app configuration every in-process Heliodor in tests and the bench starts from: a fresh session
// secret, no demo and no mailbox unless asked, no living demo unless a test turns it on, 16 MiB
// images, the device rate limit of a real fleet.
import crypto from 'node:crypto';
import type { AppDeps } from '../../server/app';
import type { Config } from '../../server/config';

type AppConfig = AppDeps['config'] & Pick<Config, 'demoLive'>;

export function appConfig(given: Pick<AppConfig, 'outboxDir' | 'storeDir' | 'webDir'> & Partial<AppConfig>): AppConfig {
  return {
    demoLive: { enabled: false, speed: 1, failRate: 0.02 },
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
