// An in-process Heliodor on a database of its own (copied from the migrated template), for API
// and browser tests. Each test file gets a fresh database, so files run in parallel safely.
import crypto from 'node:crypto';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import type { Server } from 'node:http';
import { Sequelize } from 'sequelize';
import request from 'supertest';
import type { Logger } from 'pino';
import { createApp, type AppDeps } from '../../server/app';
import { appConfig } from './config';
import { createDatabase } from '../../server/db';
import { createMailer } from '../../server/mail/mailer';
import { seedDemo } from '../../server/db/seed/demo';
import { User } from '../../server/db/models';
import { hashPassword, stopPasswordWorkers } from '../../server/auth/passwords';
import type { Role } from '../../schemas/auth';
import { testEnv } from './env';
import { startLiveDemo, type LiveDemo, type LiveDemoSettings } from '../../server/demo/live';
import { seededRandom } from '../../scripts/simulator/random';
import type { ImageStore } from '../../server/images/store';

export const testPassword = 'correct horse battery';

export async function createDatabaseFromTemplate(): Promise<{ url: string; drop: () => Promise<void> }> {
  const env = testEnv();
  const name = `t_${crypto.randomBytes(6).toString('hex')}`;
  const admin = new Sequelize(env.adminUrl, { logging: false });
  try {
    await admin.query(`CREATE DATABASE ${name} TEMPLATE ${env.templateDb}`);
  } finally {
    await admin.close();
  }
  return {
    url: `${env.baseUrl}/${name}`,
    drop: async () => {
      const a = new Sequelize(env.adminUrl, { logging: false });
      try {
        await a.query(`DROP DATABASE IF EXISTS ${name} WITH (FORCE)`);
      } finally {
        await a.close();
      }
    },
  };
}

export type TestApp = Awaited<ReturnType<typeof startTestApp>>;

/**
 * `seed: 'demo'` seeds the small demo scenario (six sites, 14 loggers, no releases) most tests build on;
 * `seedSize: 'full'` seeds the full scenario `npm start` shows (about 240 loggers, signed releases,
 * 14 days of check-ins; a few seconds more); `seedAt` seeds it as of another time (e.g. an hour ago, as
 * if no server had run since). The living demo stays off unless a test starts it (`startLiveDemo`).
 */
export async function startTestApp(
  options: {
    seed?: 'demo' | 'none';
    seedSize?: 'small' | 'full';
    seedAt?: Date;
    now?: () => Date;
    webDir?: string;
    /** Settings beyond the test defaults, e.g. `{ production: true }` for the production rules. */
    config?: Partial<AppDeps['config']>;
    /** Where the app logs (tests that scan the log for secrets); silent otherwise. */
    logger?: Logger;
    /** Another image store than the local folder (the object-storage tests). */
    images?: ImageStore;
  } = {},
) {
  const env = testEnv();
  const db = await createDatabaseFromTemplate();
  const sequelize = createDatabase(db.url, { poolMax: 10 });
  const storeDir = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-store-'));
  const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-data-'));
  if (options.seed === 'demo') {
    await seedDemo(sequelize, { password: testPassword, dataDir, storeDir, now: options.seedAt ?? options.now?.() ?? new Date(), bcryptCost: 10, size: options.seedSize ?? 'small' });
  }
  const config = appConfig({
    demo: true,
    devMailbox: true,
    outboxDir: env.outboxDir,
    storeDir,
    webDir: options.webDir ?? path.resolve(__dirname, '../../dist'),
    ...options.config,
  });
  const app = createApp({
    config,
    sequelize,
    mailer: createMailer({ host: '127.0.0.1', port: env.smtpPort, secure: false, from: 'Heliodor <heliodor@localhost>' }),
    readiness: { migrated: true, seeded: options.seed === 'demo' ? 'complete' : 'skipped' },
    now: options.now,
    logger: options.logger,
    images: options.images,
  });

  let server: Server | null = null;
  let live: LiveDemo | null = null;
  const t = {
    app,
    sequelize,
    storeDir,
    dataDir,
    /** A supertest agent that keeps cookies, i.e. a browser session. */
    agent: () => request.agent(app),
    request: () => request(app),
    /** Creates a person with the role (or reuses the demo person) and returns a signed-in agent. */
    async signedIn(role: Role, name = `Test ${role}`) {
      const email = `${name.toLowerCase().replace(/[^a-z0-9]+/g, '.')}@test.example`;
      if (!(await User.findOne({ where: { email } }))) {
        await User.create({ email, name, role, passwordHash: await hashPassword(testPassword, 10) });
      }
      const agent = request.agent(app);
      const res = await agent.post('/api/auth/sign-in').send({ email, password: testPassword });
      if (res.status !== 200) throw new Error(`sign-in failed: ${res.status} ${JSON.stringify(res.body)}`);
      return agent;
    },
    /** Listens on 127.0.0.1 with a random port, for browser tests. */
    async listen(): Promise<string> {
      server = await new Promise<Server>((resolve) => {
        const s = app.listen(0, '127.0.0.1', () => resolve(s));
      });
      return `http://127.0.0.1:${(server.address() as { port: number }).port}`;
    },
    /**
     * Turns the living demo on (server/demo/live.ts) against the listening app, as `npm start` does in
     * the demo; the settings default to the test configuration's (real time, 2 % failed installs) with
     * a fixed seed. It stops with close().
     */
    async startLiveDemo(settings: Partial<LiveDemoSettings> = {}): Promise<LiveDemo> {
      if (!server) throw new Error('listen() first: the living demo talks HTTP to the listening app');
      if (live) return live;
      live = await startLiveDemo({
        sequelize,
        dataDir,
        baseUrl: `http://127.0.0.1:${(server.address() as { port: number }).port}`,
        logger: app.services.logger,
        settings: { speed: config.demoLive.speed, failRate: config.demoLive.failRate, ...settings },
        random: seededRandom(7),
      });
      return live;
    },
    async close() {
      await live?.stop();
      await app.later.settled();
      if (server) {
        server.closeAllConnections();
        await new Promise((r) => server!.close(r));
      }
      await app.stop();
      await sequelize.close();
      await db.drop();
      fs.rmSync(storeDir, { recursive: true, force: true });
      fs.rmSync(dataDir, { recursive: true, force: true });
      await stopPasswordWorkers();
    },
  };
  return t;
}

/** Header every cookie-authenticated write must carry (CSRF guard). */
export const csrf = { 'X-Requested-With': 'heliodor' } as const;

/** A test app listening on 127.0.0.1 for one test file (the simulator and the browser talk HTTP): opened before its tests, closed after. */
export function listeningApp(options: Parameters<typeof startTestApp>[0] = { seed: 'demo' }) {
  const app = {} as { t: TestApp; base: string };
  beforeAll(async () => {
    app.t = await startTestApp(options);
    app.base = await app.t.listen();
  });
  afterAll(() => app.t?.close());
  return app;
}
