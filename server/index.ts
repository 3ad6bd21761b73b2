// Starts Heliodor: settings, database migrations, demo seed, mail fake, HTTP, and in the demo the
// living demo fleet (server/demo/live.ts). SIGINT and SIGTERM stop it all in reverse order.
import type { Server } from 'node:http';
import type pino from 'pino';
import { loadConfig } from './config';
import { createLogger } from './logging';
import { startLiveDemo, type LiveDemo } from './demo/live';
import { createDatabase, migrate } from './db';
import { databaseIsNew, seedDemo } from './db/seed/demo';
import { demoEmail, demoPeople } from './db/seed/scenario';
import { createApp } from './app';
import { closeGracefully } from './shutdown';
import { LocalImageStore } from './images/store';
import { createMailer } from './mail/mailer';
import { startFakeSmtp } from './mail/fake-smtp';
import { bcryptCost } from './auth/passwords';
import type { Readiness } from './health/routes';
import { roleNames } from '../schemas/auth';

async function main() {
  const config = loadConfig();
  const logger = createLogger({ level: config.logLevel, format: config.logFormat });
  const sequelize = createDatabase(config.databaseUrl, { poolMax: config.dbPool });
  const readiness: Readiness = { migrated: false, seeded: config.demo ? 'pending' : 'skipped' };

  const smtp = config.devMailbox && process.env.HELIODOR_SMTP_EXTERNAL !== '1'
    ? await startFakeSmtp(config.smtp.port, config.outboxDir).catch((err: Error) => {
        logger.warn(`mail fake not started on port ${config.smtp.port}: ${err.message}`);
        return null;
      })
    : null;
  const mailer = createMailer({ ...config.smtp, from: config.mailFrom });
  // Uploads cut off by an earlier process's end leave their temporary files behind: remove them before serving.
  const swept = await new LocalImageStore(config.storeDir).sweepIncoming();
  if (swept.length) logger.warn(`removed ${swept.length} unfinished upload${swept.length === 1 ? '' : 's'} from the firmware store`);
  const app = createApp({ config, sequelize, mailer, readiness, logger });

  const server: Server = await new Promise((resolve) => {
    const s = app.listen(config.port, '127.0.0.1', () => resolve(s));
  });
  const port = (server.address() as { port: number }).port;

  await waitForDatabase(sequelize, logger);
  logger.info('migrating the database');
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

  const url = `http://127.0.0.1:${port}`;
  let live: LiveDemo | null = null;
  if (config.demoLive.enabled) {
    live = await startLiveDemo({ sequelize, dataDir: config.dataDir, baseUrl: url, logger, settings: config.demoLive }).catch((err: Error) => {
      logger.warn({ err }, 'the living demo could not start; the demo stays as seeded');
      return null;
    });
  }

  const signIns = demoPeople.map((p) => ({ email: demoEmail(p.name), role: roleNames[p.role] }));
  const password = config.demoPassword === 'fernhollow-demo' ? 'fernhollow-demo' : 'from HELIODOR_DEMO_PASSWORD';
  if (config.logFormat === 'json') {
    // One JSON line per event for log collectors.
    logger.info({ url, ...(config.demo ? { demoSignIns: signIns.map((s) => s.email) } : {}) }, `Heliodor ready at ${url}`);
  } else {
    process.stdout.write(`Heliodor ready at ${url}\n`);
    if (config.demo) {
      process.stdout.write(`Demo sign-ins (password: ${password}):\n${signIns.map((s) => `  ${s.email.padEnd(28)} ${s.role}`).join('\n')}\n`);
    }
  }

  // Stopping: the living demo stops, new connections are refused, requests in flight get the grace period
  // to finish (HELIODOR_SHUTDOWN_GRACE_S), then the mail fake and the database pool close.
  let stopping = false;
  const stop = async (signal: string) => {
    if (stopping) return;
    stopping = true;
    logger.info(`${signal}: stopping; requests in flight have ${config.shutdownGraceMs / 1000} s to finish`);
    await live?.stop(); // aborts its own check-ins at once, so they do not count as requests in flight
    const { drained } = await closeGracefully(server, config.shutdownGraceMs);
    if (!drained) logger.warn(`requests still running after ${config.shutdownGraceMs / 1000} s were cut off`);
    smtp?.close(() => undefined);
    await app.stop().catch(() => undefined);
    await sequelize.close().catch(() => undefined);
    logger.info('stopped');
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
