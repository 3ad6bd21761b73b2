// Runs once per jest project: migrates the template database every test file copies, and starts
// the mail fake. `npm test` (scripts/test.js) has already started a throwaway PostgreSQL cluster.
import { createDatabase, migrate } from '../../server/db';
import { startFakeSmtp } from '../../server/mail/fake-smtp';
import { testEnv } from '../helpers/env';

export default async function globalSetup() {
  const env = testEnv();
  const g = globalThis as { __heliodorSmtp?: { close(cb: () => void): void }; __heliodorMigrated?: boolean };
  if (!g.__heliodorMigrated) {
    const sequelize = createDatabase(env.templateUrl, { poolMax: 2 });
    await migrate(sequelize);
    await sequelize.close();
    g.__heliodorMigrated = true;
  }
  if (!g.__heliodorSmtp) g.__heliodorSmtp = await startFakeSmtp(env.smtpPort, env.outboxDir);
}
