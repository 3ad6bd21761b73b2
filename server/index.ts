// Starts Heliodor: settings, database migrations, demo seed, mail fake, HTTP.
import type { Server } from 'node:http';
import pino from 'pino';
import { loadConfig } from './config';
import { createDatabase, migrate } from './db';
import { databaseIsNew, seedDemo } from './db/seed/demo';
import { demoEmail, demoPeople } from './db/seed/scenario';
import { createApp } from './app';
import { createMailer } from './mail/mailer';
import { startFakeSmtp } from './mail/fake-smtp';
import { bcryptCost } from './auth/passwords';
import type { Readiness } from './health/routes';
import { roleNames } from '../schemas/auth';

async function main() {
  const config = loadConfig();
  const logger = pino({ level: config.logLevel });
  const sequelize = createDatabase(config.databaseUrl, { poolMax: config.dbPool });
  const readiness: Readiness = { migrated: false, seeded: config.demo ? 'pending' : 'skipped' };

  const smtp = config.devMailbox && process.env.HELIODOR_SMTP_EXTERNAL !== '1'
    ? await startFakeSmtp(config.smtp.port, config.outboxDir).catch((err: Error) => {
        logger.warn(`mail fake not started on port ${config.smtp.port}: ${err.message}`);
        return null;
      })
    : null;
  const mailer = createMailer({ ...config.smtp, from: config.mailFrom });
  const app = createApp({ config, sequelize, mailer, readiness, logger });

  const server: Server = await new Promise((resolve) => {
    const s = app.listen(config.port, '127.0.0.1', () => resolve(s));
  });
  const port = (server.address() as { port: number }).port;

  await waitForDatabase(sequelize, logger);
  await migrate(sequelize);
  readiness.migrated = true;
  if (config.demo) {
    if (await databaseIsNew(sequelize)) {
      logger.info('seeding the demo scenario');
      const started = Date.now();
      await seedDemo(sequelize, {
        password: config.demoPassword, dataDir: config.dataDir, storeDir: config.storeDir, now: new Date(), bcryptCost: bcryptCost(false), size: 'full',
      });
      logger.info(`demo scenario seeded in ${((Date.now() - started) / 1000).toFixed(1)} s`);
    }
    readiness.seeded = 'complete';
  }

  process.stdout.write(`Heliodor ready at http://127.0.0.1:${port}\n`);
  if (config.demo) {
    const people = demoPeople.map((p) => `  ${demoEmail(p.name).padEnd(28)} ${roleNames[p.role]}`).join('\n');
    process.stdout.write(`Demo sign-ins (password: ${config.demoPassword === 'fernhollow-demo' ? 'fernhollow-demo' : 'from HELIODOR_DEMO_PASSWORD'}):\n${people}\n`);
  }

  let stopping = false;
  const stop = async (signal: string) => {
    if (stopping) return;
    stopping = true;
    logger.info(`${signal}: stopping`);
    server.close();
    server.closeAllConnections?.();
    smtp?.close(() => undefined);
    await app.stop().catch(() => undefined);
    await sequelize.close().catch(() => undefined);
    process.exit(0);
  };
  process.on('SIGINT', () => void stop('SIGINT'));
  process.on('SIGTERM', () => void stop('SIGTERM'));
}

/** The database may still be starting (or briefly away): wait for it instead of dying. */
async function waitForDatabase(sequelize: import('sequelize').Sequelize, logger: pino.Logger) {
  for (let attempt = 1; ; attempt++) {
    try {
      await sequelize.authenticate();
      return;
    } catch (err) {
      if (attempt >= 60) throw err;
      if (attempt === 1) logger.warn('waiting for the database…');
      await new Promise((r) => setTimeout(r, 1000));
    }
  }
}

main().catch((err) => {
  process.stderr.write(`Heliodor could not start: ${err instanceof Error ? err.stack ?? err.message : String(err)}\n`);
  process.exit(1);
});
