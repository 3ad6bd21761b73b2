// A throwaway PostgreSQL for the benchmark, the way `npm test` makes one (scripts/test.js): a cluster
// in a temp folder on a free port, without fsync (nothing here needs to survive), one database
// migrated by the app's own migrations. Everything is removed when the run ends.
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import type { Sequelize } from 'sequelize';
import { createDatabase, migrate } from '../../server/db';

type Cluster = {
  port: number;
  logFile: string;
  user: string;
  password(): string;
  url(database: string): string;
  start(): void;
  stop(): void;
  psql(sql: string, database?: string): void;
};
type Bootstrap = { freePort(): Promise<number>; pgCluster(dataDir: string, port: number, options: { durable: boolean; settings?: Record<string, string> }): Cluster; log(message: string): void };

// Plain CommonJS shared with the npm scripts (no type declarations of its own).
const bootstrap = require('../../scripts/lib/bootstrap.js') as Bootstrap;

/** A TCP port free on loopback right now (scripts/lib/bootstrap.js). */
export const freePort = (): Promise<number> => bootstrap.freePort();

export type BenchDatabase = {
  url: string;
  dataDir: string;
  sequelize: Sequelize;
  /** Stops the cluster and removes its folder. */
  close(): Promise<void>;
};

export const BENCH_DB = 'heliodor_bench';

/**
 * `settings`: PostgreSQL settings for the cluster's start (`-c name=value`), e.g. { shared_buffers: '2GB' }.
 * `keepLog`: a file to copy the cluster's log to when it stops (e.g. the plans auto_explain wrote there).
 */
export async function startBenchDatabase(settings: Record<string, string> = {}, keepLog: string | null = null): Promise<BenchDatabase> {
  const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-bench-'));
  fs.chmodSync(dataDir, 0o755);
  const cluster = bootstrap.pgCluster(dataDir, await freePort(), { durable: false, settings });
  let sequelize: Sequelize | null = null;
  const close = async () => {
    if (sequelize) await sequelize.close().catch(() => undefined);
    try {
      cluster.stop();
      if (keepLog && fs.existsSync(cluster.logFile)) fs.copyFileSync(cluster.logFile, keepLog);
    } finally {
      fs.rmSync(dataDir, { recursive: true, force: true });
    }
  };
  try {
    cluster.start();
    cluster.psql(`CREATE DATABASE ${BENCH_DB}`);
    const url = cluster.url(BENCH_DB);
    sequelize = createDatabase(url);
    await migrate(sequelize);
    return { url, dataDir, sequelize, close };
  } catch (err) {
    await close();
    throw err;
  }
}
