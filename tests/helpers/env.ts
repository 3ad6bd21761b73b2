// Settings handed over by scripts/test.js (the throwaway cluster, ports and folders).
import path from 'node:path';
import os from 'node:os';

export function testEnv() {
  const required = (name: string) => {
    const value = process.env[name];
    if (!value) throw new Error(`${name} is not set: run the tests with \`npm test\` (scripts/test.js starts PostgreSQL).`);
    return value;
  };
  const baseUrl = required('HELIODOR_TEST_PG_URL'); // postgres://user:pw@127.0.0.1:port
  const dataDir = process.env.HELIODOR_DATA ?? path.join(os.tmpdir(), 'heliodor-test');
  return {
    baseUrl,
    templateDb: 'heliodor_template',
    templateUrl: `${baseUrl}/heliodor_template`,
    adminUrl: `${baseUrl}/postgres`,
    smtpPort: Number(process.env.HELIODOR_SMTP_PORT ?? 2526),
    dataDir,
    outboxDir: path.join(dataDir, 'outbox'),
  };
}
