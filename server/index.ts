// Starts Heliodor: settings, database migrations, demo seed, mail fake, HTTP, and in the demo the
// living demo fleet (server/demo/live.ts). SIGINT and SIGTERM stop it all in reverse order.
//
// HELIODOR_WORKERS=N (default 1) serves HTTP from N processes on one port (node:cluster). The primary
// process then does the once-only work — sweeping unfinished uploads, migrating, seeding, the mail fake
// and the living demo — and serves nothing itself; each worker serves the whole app. Work that runs in
// every worker is safe there: the release cache listens for changes on its own connection, and
// check-in partition maintenance and the fleet summaries' worker (server/fleet/summaries.ts) take
// PostgreSQL advisory locks, so one process at a time does each.
// A worker that dies is replaced.
import cluster from 'node:cluster';
import type { Server } from 'node:http';
import type pino from 'pino';
import type { Sequelize } from 'sequelize';
import { loadConfig, type Config } from './config';
import { createLogger } from './logging';
import { startLiveDemo, type LiveDemo } from './demo/live';
import { createDatabase, migrate } from './db';
import { databaseIsNew, seedDemo } from './db/seed/demo';
import { demoEmail, demoPeople } from './db/seed/scenario';
import { createApp } from './app';
import { closeGracefully } from './shutdown';
import { LocalImageStore, type ImageStore } from './images/store';
import { createImageStore } from './images/select';
import { createMailer } from './mail/mailer';
import { startFakeSmtp } from './mail/fake-smtp';
import { bcryptCost } from './auth/passwords';
import type { Readiness } from './health/routes';
import { roleNames } from '../schemas/auth';

type Boot = { config: Config; logger: pino.Logger };

/** The message a worker sends its primary once it listens. */
const LISTENING = 'heliodor:listening';

async function main() {
  const config = loadConfig();
  const logger = createLogger({ level: config.logLevel, format: config.logFormat });
  if (config.workers > 1 && cluster.isWorker) return worker({ config, logger });
  return primary({ config, logger });
}

/** Serves the app on the configured port (in a worker, the port the cluster shares). */
async function serve({ config, logger }: Boot, sequelize: Sequelize, readiness: Readiness, images: ImageStore) {
  const mailer = createMailer({ ...config.smtp, from: config.mailFrom });
  const app = createApp({ config, sequelize, mailer, readiness, logger, images });
  const server: Server = await new Promise((resolve) => {
    const s = app.listen(config.port, '127.0.0.1', () => resolve(s));
  });
  return { app, server, port: (server.address() as { port: number }).port };
}

async function worker(boot: Boot) {
  const { config, logger } = boot;
  const sequelize = createDatabase(config.databaseUrl, { poolMax: config.dbPool });
  // The primary migrated and seeded before starting this worker.
  const readiness: Readiness = { migrated: true, seeded: config.demo ? 'complete' : 'skipped' };
  const images = createImageStore(config);
  await waitForDatabase(sequelize, logger);
  const { app, server, port } = await serve(boot, sequelize, readiness, images);
  process.send?.({ type: LISTENING, port });
  let stopping = false;
  const stop = async () => {
    if (stopping) return;
    stopping = true;
    const { drained } = await closeGracefully(server, config.shutdownGraceMs);
    if (!drained) logger.warn(`worker ${process.pid}: requests still running after ${config.shutdownGraceMs / 1000} s were cut off`);
    await app.stop().catch(() => undefined);
    await sequelize.close().catch(() => undefined);
    process.exit(0);
  };
  process.on('SIGINT', () => void stop());
  process.on('SIGTERM', () => void stop());
  // The primary asks a worker to stop with a message too (a signal from the terminal reaches both).
  process.on('message', (m) => m === 'heliodor:stop' && void stop());
}

async function primary(boot: Boot) {
  const { config, logger } = boot;
  const clustered = config.workers > 1;
  // The primary of a cluster only migrates, seeds and runs the living demo: a few connections do.
  const sequelize = createDatabase(config.databaseUrl, { poolMax: clustered ? 4 : config.dbPool });
  const readiness: Readiness = { migrated: false, seeded: config.demo ? 'pending' : 'skipped' };

  const smtp = config.devMailbox && process.env.HELIODOR_SMTP_EXTERNAL !== '1'
    ? await startFakeSmtp(config.smtp.port, config.outboxDir).catch((err: Error) => {
        logger.warn(`mail fake not started on port ${config.smtp.port}: ${err.message}`);
        return null;
      })
    : null;
  const images = createImageStore(config);
  // Uploads cut off by an earlier process's end leave their temporary files behind: remove them before
  // serving — here, once, before any worker could have an upload in progress.
  if (images instanceof LocalImageStore) {
    const swept = await images.sweepIncoming();
    if (swept.length) logger.warn(`removed ${swept.length} unfinished upload${swept.length === 1 ? '' : 's'} from the firmware store`);
  }

  // One process: it serves while it migrates (health answers "migrations pending"). A cluster: workers
  // start once the database is ready for them.
  const single = clustered ? null : await serve(boot, sequelize, readiness, images);

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
    // The demo seed writes its images to the local folder; an object store gets a copy of each.
    if (!(images instanceof LocalImageStore)) await copySeededImages(config.storeDir, images, logger);
    readiness.seeded = 'complete';
  }

  const workers = clustered ? await startWorkers(config.workers, logger) : null;
  const port = single ? single.port : workers!.port;

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
  const processes = clustered ? ` (${config.workers} processes)` : '';
  if (config.logFormat === 'json') {
    // One JSON line per event for log collectors.
    logger.info({ url, workers: config.workers, ...(config.demo ? { demoSignIns: signIns.map((s) => s.email) } : {}) }, `Heliodor ready at ${url}${processes}`);
  } else {
    process.stdout.write(`Heliodor ready at ${url}${processes}\n`);
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
    if (single) {
      const { drained } = await closeGracefully(single.server, config.shutdownGraceMs);
      if (!drained) logger.warn(`requests still running after ${config.shutdownGraceMs / 1000} s were cut off`);
      await single.app.stop().catch(() => undefined);
    }
    await workers?.stop();
    smtp?.close(() => undefined);
    await sequelize.close().catch(() => undefined);
    logger.info('stopped');
    process.exit(0);
  };
  process.on('SIGINT', () => void stop('SIGINT'));
  process.on('SIGTERM', () => void stop('SIGTERM'));
}

/** Forks the workers and waits until each listens; a worker that dies later is replaced. */
async function startWorkers(count: number, logger: pino.Logger): Promise<{ port: number; stop(): Promise<void> }> {
  let stopping = false;
  let port = 0;
  const fork = () =>
    new Promise<void>((resolve, reject) => {
      const w = cluster.fork();
      w.on('message', (m: { type?: string; port?: number }) => {
        if (m?.type === LISTENING) {
          port = m.port ?? port;
          resolve();
        }
      });
      w.on('exit', (code, signal) => {
        reject(new Error(`worker ${w.process.pid} ended before it listened (${signal ?? `exit ${code}`})`));
        if (stopping) return;
        logger.error(`worker ${w.process.pid} ended (${signal ?? `exit ${code}`}); starting another`);
        void fork().catch((err: Error) => logger.error(err.message));
      });
    });
  await Promise.all(Array.from({ length: count }, fork));
  return {
    port,
    async stop() {
      stopping = true;
      const all = Object.values(cluster.workers ?? {}).filter((w) => w !== undefined);
      await Promise.all(
        all.map(
          (w) =>
            new Promise<void>((resolve) => {
              if (w.isDead()) return resolve();
              w.once('exit', () => resolve());
              w.send('heliodor:stop');
            }),
        ),
      );
    },
  };
}

/** The images the demo seed wrote to the local folder, copied into an object store that lacks them. */
async function copySeededImages(storeDir: string, images: ImageStore, logger: pino.Logger) {
  const fs = await import('node:fs');
  const names = fs.existsSync(storeDir) ? fs.readdirSync(storeDir).filter((n) => /^[0-9a-f]{64}$/.test(n)) : [];
  let copied = 0;
  for (const sha256 of names) {
    if ((await images.sizeOf(sha256)) !== null) continue;
    const received = await images.receive(fs.createReadStream(`${storeDir}/${sha256}`)).done;
    if (received.sha256 !== sha256) {
      await received.discard();
      throw new Error(`the demo image ${sha256} in ${storeDir} does not match its SHA-256`);
    }
    if (await received.commit()) copied++;
  }
  if (copied) logger.info(`copied ${copied} demo image${copied === 1 ? '' : 's'} to ${images.describe()}`);
}

/** The database may still be starting (or briefly away): wait for it instead of dying. */
async function waitForDatabase(sequelize: Sequelize, logger: pino.Logger) {
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
