// `npm run simulate` end to end: the command-line simulator run against the in-process app on the
// loopback interface, with the demo scenario's bench sheet (PRODUCT.md) and a trusted key folder.
// It must finish within its time bound, print a progress line and a summary, and exit 0 when nothing
// unexpected happened — and non-zero when something did (a revoked token answered 401, DEVICE_API.md
// "Authentication").
import crypto from 'node:crypto';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { QueryTypes } from 'sequelize';
import { startTestApp, testPassword, type TestApp } from '../helpers/app';
import { simulate as runSimulator } from '../helpers/simulate';

let t: TestApp;
let baseUrl: string;
let keysDir: string;
beforeAll(async () => {
  t = await startTestApp({ seed: 'demo' });
  baseUrl = await t.listen();
  keysDir = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-sim-keys-'));
  const pair = crypto.generateKeyPairSync('ed25519');
  fs.writeFileSync(path.join(keysDir, 'signing-key.public.pem'), String(pair.publicKey.export({ type: 'spki', format: 'pem' })));
});
afterAll(async () => {
  fs.rmSync(keysDir, { recursive: true, force: true });
  await t.close();
});

const simulate = (args: string[]) => runSimulator(args, { env: { HELIODOR_DATA: t.dataDir }, timeoutMs: 90_000 });

describe('the fleet simulator command', () => {
  test('when it runs the demo bench sheet for a few seconds, then every logger checks in, it prints progress and a summary, and exits 0', async () => {
    const run = await simulate(['--url', baseUrl, '--loggers', '500', '--minutes', '0.1', '--speed', '600', '--keys', keysDir, '--seed', '7']);
    expect(run.stderr).toContain('the bench sheet has 14 loggers; simulating those');
    expect(run.stdout).toMatch(/check-ins \d+ · offers \d+ · installs \d+ · failures \d+ · errors 0/);
    expect(run.stdout).toContain('Summary');
    const checkIns = Number(/check-ins\s+(\d+)\n/.exec(run.stdout)?.[1]);
    expect(checkIns).toBeGreaterThanOrEqual(14);
    expect(run.stdout).toMatch(/errors\s+0\n/);
    expect(run.code).toBe(0);
  });

  test('when a logger of the bench sheet has been retired (its token answers 401), then the run counts errors and exits non-zero', async () => {
    const bench = fs.readFileSync(path.join(t.dataDir, 'demo', 'bench-sheet.csv'), 'utf8').trim().split('\n');
    const sheet = path.join(keysDir, 'bench.csv');
    const revoked = `hlt_${crypto.randomBytes(32).toString('base64url')}`;
    fs.writeFileSync(sheet, [bench[0], bench[1], `FL2-GONE1,${revoked},FL-2 field logger,B`].join('\n'));
    const run = await simulate(['--url', baseUrl, '--bench-sheet', sheet, '--minutes', '0.05', '--speed', '600', '--keys', keysDir]);
    expect(run.stdout).toMatch(/errors\s+[1-9]\d*\n/);
    expect(run.stdout).toContain('FL2-GONE1: check-in answered 401');
    expect(run.code).toBe(1);
  });

  test('when told to take versions from the console, then each logger reports the version on record, not the per-board default', async () => {
    const first = fs.readFileSync(path.join(t.dataDir, 'demo', 'bench-sheet.csv'), 'utf8').trim().split('\n')[2].split(',')[0];
    await t.sequelize.query("UPDATE loggers SET firmware = '2.2.5' WHERE serial = :serial", { replacements: { serial: first } });
    const run = await simulate(['--url', baseUrl, '--loggers', '3', '--minutes', '0.05', '--speed', '600', '--keys', keysDir, '--firmware', 'console', '--password', testPassword]);
    expect(run.code).toBe(0);
    const [row] = await t.sequelize.query<{ firmware: string }>('SELECT firmware FROM loggers WHERE serial = :serial', { type: QueryTypes.SELECT, replacements: { serial: first } });
    expect(row.firmware).toBe('2.2.5');
  });

  test('when the options are out of bounds, then it refuses to start', async () => {
    const run = await simulate(['--url', baseUrl, '--loggers', '100000', '--keys', keysDir]);
    expect(run.stderr).toMatch(/--loggers must be a whole number from 1 to 5000/);
    expect(run.code).not.toBe(0);
  });
});
