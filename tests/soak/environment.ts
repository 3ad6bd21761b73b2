// The soak's world: a PostgreSQL cluster of its own (so it can be stopped without touching anyone
// else's database), one migrated database seeded with the small Fernhollow scenario, and Heliodor
// running as its own process (`node --import tsx server/index.ts`, as `npm start` runs it), so the
// resident memory sampled is the server's alone and a crash cannot hide inside the test process.
//
// The outage is real, one of two kinds:
// - `pg_ctl` (npm run test:soak): `pg_ctl stop -m fast` on the cluster of its own (every backend
//   terminated, new connections refused), a wait, then `pg_ctl start` on the same data folder
//   (scripts/lib/bootstrap.js `pgCluster`);
// - `relay` (the fast soak in npm test, which shares the test cluster with other files): the server
//   reaches PostgreSQL through a TCP relay that resets every connection and refuses new ones (proxy.ts).
import { spawn, type ChildProcess } from 'node:child_process';
import fs from 'node:fs';
import { freePort } from '../bench/database';
import os from 'node:os';
import path from 'node:path';
import crypto from 'node:crypto';
import { Sequelize } from 'sequelize';
import { createDatabase, migrate } from '../../server/db';
import { seedDemo } from '../../server/db/seed/demo';
import { testEnv } from '../helpers/env';
import { startTcpRelay } from './proxy';

type Cluster = {
  port: number;
  url(database: string): string;
  start(): void;
  stop(): void;
  psql(sql: string, database?: string): void;
};
type Bootstrap = { pgCluster(dataDir: string, port: number, options: { durable: boolean }): Cluster; root: string };

// Plain CommonJS shared with the npm scripts (no type declarations of its own).
const bootstrapPath = path.resolve(__dirname, '../../scripts/lib/bootstrap.js');
const bootstrap = require(bootstrapPath) as Bootstrap;

export const SOAK_DB = 'heliodor_soak';
/** Every demo person's password in the soak's database (PRODUCT.md's people, seeded by seedDemo). */
export const SOAK_PASSWORD = 'soak-run-fernhollow-2026';

/** A free loopback port, as the bench finds one. */
export { freePort };

const sleep = (ms: number) => new Promise<void>((resolve) => setTimeout(resolve, ms));

/**
 * Runs `pgCluster(...).stop()` or `.start()` in a child Node process, so the soak's own event loop
 * (the simulated loggers) keeps running while pg_ctl waits; bootstrap.js stays the one definition of
 * how the cluster is started.
 */
function clusterCommand(dataDir: string, port: number, command: 'stop' | 'start'): Promise<void> {
  const script = `const b = require(${JSON.stringify(bootstrapPath)}); b.pgCluster(process.argv[1], Number(process.argv[2]), { durable: false })[process.argv[3]]();`;
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, ['-e', script, dataDir, String(port), command], { stdio: ['ignore', 'ignore', 'pipe'] });
    let err = '';
    child.stderr.on('data', (d: Buffer) => (err += d.toString()));
    child.on('error', reject);
    child.on('exit', (code) => (code === 0 ? resolve() : reject(new Error(`pg_ctl ${command} failed (${code}): ${err.trim()}`))));
  });
}

/** Resident set size of a process in bytes (VmRSS in /proc/<pid>/status, proc(5)), or null once it is gone. */
export function rssOf(pid: number): number | null {
  try {
    const m = /^VmRSS:\s+(\d+)\s+kB$/m.exec(fs.readFileSync(`/proc/${pid}/status`, 'utf8'));
    return m ? Number(m[1]) * 1024 : null;
  } catch {
    return null;
  }
}

export type SoakServer = {
  base: string;
  pid: number;
  logFile: string;
  /** Exit code or signal once the process has ended on its own (a crash), else null. */
  exited(): string | null;
  /** The last lines of the server's log, for a failure message. */
  tail(lines?: number): string;
};

export type SoakEnvironment = {
  server: SoakServer;
  dataDir: string;
  /** A fresh connection to the soak's database (the caller closes it). */
  connect(): Sequelize;
  /** Stops PostgreSQL (fast shutdown), waits, starts it again on the same data folder; wall-clock times in ms. */
  outage(seconds: number, onStopped?: () => void): Promise<{ stoppedAt: number; startedAt: number; backAt: number }>;
  close(): Promise<void>;
};

/** Where the soak's database lives and how it goes away. */
type SoakDatabase = {
  /** For the soak's own reads. */
  url: string;
  /** For the server (through the relay, when there is one). */
  serverUrl: string;
  stop(): Promise<void>;
  start(): Promise<void>;
  close(): Promise<void>;
};

/** A cluster of its own, stopped with pg_ctl stop -m fast and started again on the same data folder. */
async function ownCluster(dataDir: string, log: (line: string) => void): Promise<SoakDatabase> {
  const pgPort = await freePort();
  const cluster = bootstrap.pgCluster(dataDir, pgPort, { durable: false });
  log(`PostgreSQL cluster of its own on 127.0.0.1:${pgPort}`);
  cluster.start();
  cluster.psql(`CREATE DATABASE ${SOAK_DB}`);
  const url = cluster.url(SOAK_DB);
  const db = createDatabase(url, { poolMax: 2 });
  try {
    log('migrating and seeding the small Fernhollow scenario');
    await migrate(db);
  } finally {
    await db.close();
  }
  return {
    url,
    serverUrl: url,
    stop: () => clusterCommand(dataDir, pgPort, 'stop'),
    start: () => clusterCommand(dataDir, pgPort, 'start'),
    close: () => clusterCommand(dataDir, pgPort, 'stop'),
  };
}

/**
 * A database copied from `npm test`'s migrated template (tests/helpers/env.ts), reached by the server
 * through a relay (proxy.ts) that cuts every connection and refuses new ones for the outage: the
 * shared test cluster itself cannot be stopped while other test files use it.
 */
async function testClusterThroughRelay(log: (line: string) => void): Promise<SoakDatabase> {
  const env = testEnv();
  const name = `soak_${crypto.randomBytes(5).toString('hex')}`;
  const admin = new Sequelize(env.adminUrl, { logging: false });
  try {
    await admin.query(`CREATE DATABASE ${name} TEMPLATE ${env.templateDb}`);
  } finally {
    await admin.close();
  }
  const url = new URL(`${env.baseUrl}/${name}`);
  const relay = await startTcpRelay({ host: url.hostname, port: Number(url.port) });
  const serverUrl = new URL(url);
  serverUrl.port = String(relay.port);
  log(`database ${name} of the test cluster, through a relay on 127.0.0.1:${relay.port}`);
  return {
    url: url.toString(),
    serverUrl: serverUrl.toString(),
    stop: () => relay.cut(),
    start: () => relay.restore(),
    async close() {
      await relay.close();
      const a = new Sequelize(env.adminUrl, { logging: false });
      try {
        await a.query(`DROP DATABASE IF EXISTS ${name} WITH (FORCE)`);
      } finally {
        await a.close();
      }
    },
  };
}

export type OutageKind = 'pg_ctl' | 'relay';

/**
 * Makes the database (`pg_ctl`: a cluster of its own; `relay`: a copy of the test template behind a
 * relay), seeds the small Fernhollow scenario, and starts Heliodor on a free port with the device
 * rate limit given (HELIODOR_DEVICE_RATE) and the living demo off.
 */
export async function startSoakEnvironment(options: { deviceRatePerMinute: number; outageKind: OutageKind; log?: (line: string) => void }): Promise<SoakEnvironment> {
  const log = options.log ?? (() => undefined);
  const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-soak-'));
  fs.chmodSync(dataDir, 0o755);
  const storeDir = path.join(dataDir, 'store');
  fs.mkdirSync(storeDir);
  let database: SoakDatabase | null = null;
  let child: ChildProcess | null = null;
  let exitedWith: string | null = null;

  const close = async () => {
    if (child && child.exitCode === null && child.signalCode === null) {
      const done = new Promise((resolve) => child!.once('exit', resolve));
      child.kill('SIGTERM');
      await Promise.race([done, sleep(10_000)]);
      if (child.exitCode === null && child.signalCode === null) child.kill('SIGKILL');
    }
    try {
      await database?.close();
    } finally {
      fs.rmSync(dataDir, { recursive: true, force: true });
    }
  };

  try {
    database = options.outageKind === 'pg_ctl' ? await ownCluster(dataDir, log) : await testClusterThroughRelay(log);
    const db = database;
    const sequelize = createDatabase(db.url, { poolMax: 2 });
    try {
      await seedDemo(sequelize, { password: SOAK_PASSWORD, dataDir, storeDir, now: new Date(), bcryptCost: 10, size: 'small' });
    } finally {
      await sequelize.close();
    }

    const port = await freePort();
    const logFile = path.join(dataDir, 'server.log');
    const out = fs.openSync(logFile, 'a');
    const server = spawn(process.execPath, ['--import', 'tsx', 'server/index.ts'], {
      cwd: bootstrap.root,
      stdio: ['ignore', out, out],
      env: {
        PATH: process.env.PATH,
        HOME: process.env.HOME,
        // What Express assumes when `npm start` leaves it unset.
        NODE_ENV: 'development',
        PORT: String(port),
        HELIODOR_ENV: 'test',
        HELIODOR_DATA: dataDir,
        HELIODOR_STORE: storeDir,
        DATABASE_URL: db.serverUrl,
        HELIODOR_DEMO: '0',
        HELIODOR_DEMO_LIVE: '0',
        HELIODOR_SMTP_PORT: String(await freePort()),
        HELIODOR_LOG_FORMAT: 'json',
        HELIODOR_LOG_LEVEL: 'warn',
        HELIODOR_DEVICE_RATE: String(options.deviceRatePerMinute),
        HELIODOR_SHUTDOWN_GRACE_S: '5',
      },
    });
    child = server;
    fs.closeSync(out);
    server.on('exit', (code, signal) => (exitedWith = signal ? `signal ${signal}` : `exit code ${code}`));
    const base = `http://127.0.0.1:${port}`;
    const tail = (lines = 20) => (fs.existsSync(logFile) ? fs.readFileSync(logFile, 'utf8').trimEnd().split('\n').slice(-lines).join('\n') : '');
    // Ready once /api/health/ready answers 200 (migrations known, database up).
    for (let i = 0; ; i++) {
      if (exitedWith) throw new Error(`the server stopped while starting (${exitedWith}):\n${tail()}`);
      const ready = await fetch(`${base}/api/health/ready`).then((r) => r.status === 200, () => false);
      if (ready) break;
      if (i > 600) throw new Error(`the server did not become ready in 120 s:\n${tail()}`);
      await sleep(200);
    }
    log(`Heliodor (pid ${server.pid}) ready at ${base}`);
    const soakServer: SoakServer = { base, pid: server.pid!, logFile, exited: () => exitedWith, tail };
    return {
      server: soakServer,
      dataDir,
      connect: () => createDatabase(db.url, { poolMax: 4 }),
      async outage(seconds, onStopped) {
        const stoppedAt = Date.now();
        await db.stop();
        onStopped?.();
        await sleep(Math.max(0, seconds * 1000 - (Date.now() - stoppedAt)));
        const startedAt = Date.now();
        await db.start();
        return { stoppedAt, startedAt, backAt: Date.now() };
      },
      close,
    };
  } catch (err) {
    await close().catch(() => undefined);
    throw err;
  }
}
