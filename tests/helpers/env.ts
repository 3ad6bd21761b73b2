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
  // Each lane of a full `npm test` migrates its own template (scripts/test.js).
  const templateDb = process.env.HELIODOR_TEST_TEMPLATE ?? 'heliodor_template';
  return {
    baseUrl,
    templateDb,
    templateUrl: `${baseUrl}/${templateDb}`,
    adminUrl: `${baseUrl}/postgres`,
    smtpPort: Number(process.env.HELIODOR_SMTP_PORT ?? 2526),
    dataDir,
    outboxDir: path.join(dataDir, 'outbox'),
  };
}
