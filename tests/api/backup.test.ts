// `npm run backup` and `npm run restore` as an operator runs them (child processes of the real scripts),
// round-tripping the full demo: every table has the same number of rows after the restore, and every image
// is back under its own SHA-256. The archive is read with GNU tar and its SHA256SUMS checked with
// coreutils' `sha256sum -c` — readers other than the scripts' own; SHA-256 itself: FIPS 180-4 (node:crypto
// here). A restore refuses a data folder that holds anything, and a damaged archive restores nothing.
import { spawnSync } from 'node:child_process';
import crypto from 'node:crypto';
import fs from 'node:fs';
import net from 'node:net';
import os from 'node:os';
import path from 'node:path';
import { QueryTypes, Sequelize } from 'sequelize';
import { startTestApp, type TestApp } from '../helpers/app';
import { SUMMARY_TABLES } from '../../server/fleet/summaries';
import * as reference from '../helpers/fleet-reference';

// eslint-disable-next-line @typescript-eslint/no-require-imports
const bootstrap = require('../../scripts/lib/bootstrap.js') as { pgCluster(dataDir: string, port: number, o?: { durable?: boolean }): { start(): void; stop(): void; url(db: string): string } };

const root = path.resolve(__dirname, '../..');
const work = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-backup-test-'));
fs.chmodSync(work, 0o755); // the restored cluster belongs to the postgres user, who must reach it

let t: TestApp;
beforeAll(async () => {
  t = await startTestApp({ seed: 'demo', seedSize: 'full' });
});
afterAll(async () => {
  await t.close();
  fs.rmSync(work, { recursive: true, force: true });
});

function freePort(): Promise<number> {
  return new Promise((resolve) => {
    const srv = net.createServer().listen(0, '127.0.0.1', () => {
      const { port } = srv.address() as net.AddressInfo;
      srv.close(() => resolve(port));
    });
  });
}

/** Runs `npm run <script> -- <file>` the way npm does (tsx), with the given settings. */
function run(script: 'backup' | 'restore', file: string, env: Record<string, string>) {
  const clean = { ...process.env };
  delete clean.DATABASE_URL;
  const r = spawnSync(process.execPath, ['--import', 'tsx', `scripts/${script}.ts`, file], { cwd: root, env: { ...clean, ...env }, encoding: 'utf8' });
  return { status: r.status, stdout: r.stdout, stderr: r.stderr };
}

async function tableCounts(sequelize: Sequelize): Promise<Record<string, number>> {
  const tables = await sequelize.query<{ name: string }>(`SELECT tablename AS name FROM pg_tables WHERE schemaname = 'public' ORDER BY tablename`, { type: QueryTypes.SELECT });
  const counts: Record<string, number> = {};
  // The fleet summaries are derived and the source's summary worker keeps folding them after the backup;
  // they are checked against the restored fleet below instead.
  for (const { name } of tables.filter((x) => !(SUMMARY_TABLES as readonly string[]).includes(x.name))) counts[name] = Number((await sequelize.query<{ n: string }>(`SELECT count(*) AS n FROM "${name}"`, { type: QueryTypes.SELECT }))[0].n);
  return counts;
}

const sha256 = (file: string) => crypto.createHash('sha256').update(fs.readFileSync(file)).digest('hex');
const sourceUrl = () => {
  const c = t.sequelize.config;
  return `postgres://${c.username}:${encodeURIComponent(String(c.password))}@${c.host}:${c.port}/${c.database}`;
};

describe('backup and restore', () => {
  test('when the demo is backed up and restored into an empty data folder, then every table has its rows and every image its digest', async () => {
    const archive = path.join(work, 'heliodor-demo.tar');
    const backup = run('backup', archive, { DATABASE_URL: sourceUrl(), HELIODOR_DATA: t.dataDir, HELIODOR_STORE: t.storeDir });
    expect(backup.stderr).toBe('');
    expect(backup.status).toBe(0);
    expect(backup.stdout).toMatch(/^Backup written to /m);

    // GNU tar reads it, and coreutils checks every file against SHA256SUMS.
    const unpacked = path.join(work, 'unpacked');
    fs.mkdirSync(unpacked);
    expect(spawnSync('tar', ['-xf', archive, '-C', unpacked]).status).toBe(0);
    const check = spawnSync('sha256sum', ['--check', '--strict', 'SHA256SUMS'], { cwd: path.join(unpacked, 'heliodor-backup'), encoding: 'utf8' });
    expect(check.status).toBe(0);
    expect(check.stdout).toMatch(/database\.dump: OK/);
    // Never the session secret or the database password; the demo's token secret, so the restored demo checks in.
    const inside = spawnSync('tar', ['-tf', archive], { encoding: 'utf8' }).stdout.split('\n');
    expect(inside).toContain('heliodor-backup/data/secrets/demo-logger-tokens');
    expect(inside.some((n) => /jwt-secret|pg-password/.test(n))).toBe(false);

    const data = path.join(work, 'restored-data');
    const store = path.join(work, 'restored-store');
    const port = await freePort();
    const restore = run('restore', archive, { HELIODOR_DATA: data, HELIODOR_STORE: store, HELIODOR_PG_PORT: String(port) });
    expect(restore.stderr).toBe('');
    expect(restore.status).toBe(0);
    expect(restore.stdout).toMatch(/^Restored heliodor-demo\.tar/m);

    const cluster = bootstrap.pgCluster(data, port);
    cluster.start();
    const restored = new Sequelize(cluster.url('heliodor'), { logging: false });
    try {
      const before = await tableCounts(t.sequelize);
      const after = await tableCounts(restored);
      expect(Object.keys(before).length).toBeGreaterThan(15);
      expect(before.loggers).toBeGreaterThan(200);
      expect(after).toEqual(before);
      // The restored summaries read as a full recount of the restored loggers and reports.
      const counts = await reference.loggerCounts(restored);
      expect(counts.perSite).toEqual(counts.scan);
      expect(counts.fleetWide).toEqual(counts.fleetScan);
      const reports = await reference.reportCounts(restored);
      expect(reports.summary).toEqual(reports.scan);
      const images = (await restored.query<{ sha256: string }>('SELECT sha256 FROM images ORDER BY sha256', { type: QueryTypes.SELECT })).map((r) => r.sha256.trim());
      expect(images.length).toBeGreaterThan(0);
      expect(fs.readdirSync(store).sort()).toEqual(images);
      for (const name of images) expect(sha256(path.join(store, name))).toBe(name);
      expect(fs.readFileSync(path.join(data, 'secrets', 'demo-logger-tokens'), 'utf8')).toBe(fs.readFileSync(path.join(t.dataDir, 'secrets', 'demo-logger-tokens'), 'utf8'));
      expect(fs.statSync(path.join(data, 'secrets', 'demo-logger-tokens')).mode & 0o777).toBe(0o600);
    } finally {
      await restored.close();
      cluster.stop();
    }

    // A second restore into the now-filled folder is refused, and what is there stays.
    const again = run('restore', archive, { HELIODOR_DATA: data, HELIODOR_STORE: store, HELIODOR_PG_PORT: String(port) });
    expect(again.status).not.toBe(0);
    expect(again.stderr).toMatch(/is not empty/);
    expect(fs.readdirSync(store).length).toBeGreaterThan(0);
    expect(fs.existsSync(path.join(data, 'pg', 'cluster', 'PG_VERSION'))).toBe(true);
  });

  test('when an image in the archive was altered, then the restore names it and leaves the empty folders empty', async () => {
    const archive = path.join(work, 'heliodor-demo-2.tar');
    expect(run('backup', archive, { DATABASE_URL: sourceUrl(), HELIODOR_DATA: t.dataDir, HELIODOR_STORE: t.storeDir }).status).toBe(0);
    // Unpack with GNU tar, change one byte of one image, pack it again.
    const unpacked = path.join(work, 'damaged');
    fs.mkdirSync(unpacked);
    expect(spawnSync('tar', ['-xf', archive, '-C', unpacked]).status).toBe(0);
    const imageDir = path.join(unpacked, 'heliodor-backup', 'firmware-store');
    const victim = path.join(imageDir, fs.readdirSync(imageDir)[0]);
    const bytes = fs.readFileSync(victim);
    bytes[bytes.length >> 1] ^= 0xff;
    fs.writeFileSync(victim, bytes);
    const damaged = path.join(work, 'damaged.tar');
    expect(spawnSync('tar', ['-cf', damaged, '-C', unpacked, 'heliodor-backup']).status).toBe(0);

    const data = path.join(work, 'empty-data');
    const store = path.join(work, 'empty-store');
    fs.mkdirSync(data);
    fs.mkdirSync(store);
    const restore = run('restore', damaged, { HELIODOR_DATA: data, HELIODOR_STORE: store, HELIODOR_PG_PORT: String(await freePort()) });
    expect(restore.status).not.toBe(0);
    expect(restore.stderr).toContain(`firmware-store/${path.basename(victim)} does not match its SHA-256`);
    expect(fs.readdirSync(data)).toEqual([]);
    expect(fs.readdirSync(store)).toEqual([]);
  });
});
