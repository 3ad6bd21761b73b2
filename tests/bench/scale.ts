// The bench's scale runs (tests/bench/README.md "Scale"):
// - the offer decision alone (rollout/decision.ts) on the bench's own releases and loggers, decisions
//   per second, with the releases parsed once as the release cache keeps them and, for comparison,
//   parsed at every decision;
// - check-in throughput of real server processes (server/index.ts) with HELIODOR_WORKERS=1 and =N
//   against the bench's database, at a concurrency that keeps every process busy.
import { spawn } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { QueryTypes, type Sequelize } from 'sequelize';
import { decideOffer, offerInput } from '../../server/rollout/decision';
import { loadReleasesOfModel } from '../../server/releases/targeting';
import { freePort } from './database';
import { measure } from './measure';
import type { SeededFleet } from './seed';

const root = path.resolve(__dirname, '../..');

/** Decisions per second for the live release's model: with parsed releases, and with the parse redone each time. */
export async function decisionBench(sequelize: Sequelize, fleet: SeededFleet, seconds: number): Promise<{ parsed: number; unparsed: number }> {
  const [{ modelId }] = await sequelize.query<{ modelId: string }>('SELECT model_id AS "modelId" FROM releases WHERE id = :id', {
    type: QueryTypes.SELECT,
    replacements: { id: fleet.liveReleaseId },
  });
  const parsed = await loadReleasesOfModel(sequelize, modelId);
  const unparsed = parsed.map(({ parsed: _p, ...r }) => r);
  const loggers = await sequelize.query<{ id: string; siteId: string; board: string; channel: 'stable' | 'early'; firmware: string; latitude: number | null; longitude: number | null }>(
    `SELECT l.id, l.site_id AS "siteId", l.board, l.channel, l.firmware, s.latitude, s.longitude
       FROM loggers l JOIN sites s ON s.id = l.site_id WHERE l.model_id = :modelId AND l.firmware IS NOT NULL ORDER BY l.id LIMIT 1000`,
    { type: QueryTypes.SELECT, replacements: { modelId } },
  );
  const now = new Date();
  const rate = (releases: typeof unparsed) => {
    let n = 0;
    const started = performance.now();
    while (performance.now() - started < seconds * 1000) {
      for (let i = 0; i < 200; i++, n++) {
        const l = loggers[n % loggers.length];
        decideOffer(offerInput({ ...l, status: 'enrolled', securityCounter: 1, supplyV: 5, minUpdateSupplyV: 4.6 }, releases, [], now));
      }
    }
    return n / ((performance.now() - started) / 1000);
  };
  rate(parsed); // warm the JIT
  return { parsed: rate(parsed), unparsed: rate(unparsed) };
}

/** Starts Heliodor with `workers` processes on the bench database, times check-ins, stops it. */
export async function processThroughput(
  databaseUrl: string,
  storeDir: string,
  fleet: SeededFleet,
  workers: number,
  log: (msg: string) => void,
): Promise<{ perS: number; p50: number; errors: string[] }> {
  const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-bench-workers-'));
  const port = await freePort();
  const child = spawn(process.execPath, ['--import', 'tsx', 'server/index.ts'], {
    cwd: root,
    env: {
      ...process.env,
      DATABASE_URL: databaseUrl,
      PORT: String(port),
      HELIODOR_ENV: 'test',
      HELIODOR_DEMO: '0',
      HELIODOR_SMTP_EXTERNAL: '1',
      HELIODOR_STORE: storeDir,
      HELIODOR_DATA: dataDir,
      HELIODOR_LOG_FORMAT: 'pretty',
      HELIODOR_LOG_LEVEL: 'warn',
      HELIODOR_WORKERS: String(workers),
      HELIODOR_DEVICE_RATE: '100000',
    },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  try {
    await new Promise<void>((resolve, reject) => {
      let out = '';
      const onData = (chunk: Buffer) => {
        out += chunk.toString('utf8');
        if (out.includes('Heliodor ready at')) resolve();
      };
      child.stdout!.on('data', onData);
      child.stderr!.on('data', onData);
      child.on('exit', (code) => reject(new Error(`HELIODOR_WORKERS=${workers} ended (exit ${code}) before it was ready:\n${out}`)));
    });
    const concurrency = 16 * workers;
    const build = (i: number) => {
      const l = fleet.tokenLoggers[i % fleet.tokenLoggers.length];
      const body = { firmware: l.firmware, board: l.board, security_counter: l.securityCounter, supply_v: 5.04, config_version: 1, uptime_s: 3600 + i };
      return {
        path: '/api/device/v1/check-in',
        init: { method: 'POST', headers: { Authorization: `Bearer ${l.token}`, 'Content-Type': 'application/json' }, body: JSON.stringify(body) },
      };
    };
    const m = await measure(`http://127.0.0.1:${port}`, build, { warmup: 200, requests: 2000, concurrency, budgetS: 30, minRequests: 200 });
    const perS = m.n / (m.wallMs / 1000);
    log(`HELIODOR_WORKERS=${workers}: ${perS.toFixed(0)} check-ins/s at ${concurrency} concurrent, p50 ${m.p50.toFixed(1)} ms`);
    return { perS, p50: m.p50, errors: m.errors };
  } finally {
    await new Promise<void>((resolve) => {
      if (child.exitCode !== null) return resolve();
      child.once('exit', () => resolve());
      child.kill('SIGTERM');
    });
    fs.rmSync(dataDir, { recursive: true, force: true });
  }
}
