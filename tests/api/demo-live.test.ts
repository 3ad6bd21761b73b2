// The living demo (server/demo/live.ts) against the real app: the full demo scenario seeded fifty
// minutes ago with no server running since, then the living demo turned on with its clock at 60× (the
// same code path as real time, each logger's interval passes in 15 s). Which logger plays which part
// comes from the seed's own fleet plan (server/db/seed/fleet-plan.ts, PRODUCT.md "Demo scenario").
// Sources: DEVICE_API.md (check-ins go to POST /api/device/v1/check-in with the logger's bearer token);
// the FL-2's 4.6 V update minimum (server/db/seed/scenario.ts); 85 °C, the temperature register's
// power-on value 0550h (DS18B20 data sheet, Table 1).
import { Writable } from 'node:stream';
import { QueryTypes } from 'sequelize';
import { listeningApp } from '../helpers/app';
import { createLogger } from '../../server/logging';
import { startLiveDemo, type LiveDemo } from '../../server/demo/live';
import { planFleet } from '../../server/db/seed/fleet-plan';
import { seededRandom } from '../../scripts/simulator/random';

const seededAt = new Date(Date.now() - 50 * 60_000);
const app = listeningApp({ seed: 'demo', seedSize: 'full', seedAt: seededAt });
const logged: string[] = [];
let live: LiveDemo;
let startedAt: Date;

const q = <T extends object>(sql: string, replacements: Record<string, unknown> = {}) => app.t.sequelize.query<T>(sql, { type: QueryTypes.SELECT, replacements });
const plan = () => planFleet(seededAt);
const serialsWith = (role: string) => plan().loggers.filter((l) => l.status === 'enrolled' && l.roles.includes(role as never)).map((l) => l.serial);

/** Waits (polling the database) until `done` holds; the jest timeout bounds it. */
async function until(done: () => Promise<boolean>) {
  while (!(await done())) await new Promise((r) => setTimeout(r, 500));
}

beforeAll(async () => {
  const capture = new Writable({
    write(chunk, _encoding, callback) {
      logged.push(String(chunk));
      callback();
    },
  });
  startedAt = new Date();
  live = await startLiveDemo({
    sequelize: app.t.sequelize,
    dataDir: app.t.dataDir,
    baseUrl: app.base,
    logger: createLogger({ level: 'debug', format: 'json' }, capture),
    settings: { speed: 60, failRate: 0.02 },
    random: seededRandom(11),
  });
});
afterAll(() => live?.stop());

describe('the living demo', () => {
  test('when it starts, then every enrolled logger that is not silent by the scenario checks in through the device API on loopback, and the silent ones stay silent', async () => {
    const silent = serialsWith('silent');
    const [{ enrolled }] = await q<{ enrolled: number }>("SELECT count(*)::int AS enrolled FROM loggers WHERE status = 'enrolled'");
    expect(silent.length).toBeGreaterThan(0);
    expect(live.loggers).toBe(enrolled - silent.length);

    const seen = async () => (await q<{ n: number }>('SELECT count(DISTINCT logger_id)::int AS n FROM check_ins WHERE at >= :startedAt', { startedAt }))[0].n;
    await until(async () => (await seen()) >= live.loggers);

    // Each check-in came over HTTP from this machine (the device API records the caller's address).
    const sources = await q<{ ip: string | null; n: number }>('SELECT ip, count(*)::int AS n FROM check_ins WHERE at >= :startedAt GROUP BY ip', { startedAt });
    expect(sources.map((s) => s.ip)).toEqual(['127.0.0.1']);
    const heard = await q<{ serial: string }>(
      'SELECT DISTINCT l.serial FROM check_ins c JOIN loggers l ON l.id = c.logger_id WHERE c.at >= :startedAt',
      { startedAt },
    );
    expect(heard.filter((h) => silent.includes(h.serial))).toEqual([]);
  });

  test('when the fleet comes back after the server was off, then its first check-ins spread across the interval instead of arriving at once', async () => {
    // 60× speed: a 900 s interval lasts 15 real seconds; no single second may carry a fifth of the fleet.
    const perSecond = await q<{ n: number }>(
      `SELECT count(*)::int AS n FROM (SELECT DISTINCT ON (logger_id) at FROM check_ins WHERE at >= :startedAt ORDER BY logger_id, at) first
        GROUP BY date_trunc('second', at)`,
      { startedAt },
    );
    expect(Math.max(...perSecond.map((p) => p.n))).toBeLessThan(live.loggers / 5);
  });

  test('when the sagging supply and the stuck probe of the scenario check in, then they report below 4.6 V and 85 °C', async () => {
    const [sagging] = serialsWith('low_supply');
    const [stuck] = serialsWith('probe_fault');
    const latest = (serial: string) =>
      q<{ supply_v: number; temp_c: number }>(
        `SELECT c.supply_v::float8 AS supply_v, (c.readings->>'temp_c')::float8 AS temp_c FROM check_ins c JOIN loggers l ON l.id = c.logger_id
          WHERE l.serial = :serial AND c.at >= :startedAt ORDER BY c.at DESC LIMIT 1`,
        { serial, startedAt },
      );
    const [s] = await latest(sagging);
    expect(s.supply_v).toBeLessThan(4.6);
    const [p] = await latest(stuck);
    expect(p.temp_c).toBe(85);
  });

  test('when the loggers talk, then no logger token appears in the log, and the database keeps only digests', async () => {
    await live.stop();
    const text = logged.join('');
    expect(text).toContain('living demo:');
    expect(text).not.toMatch(/hlt_[A-Za-z0-9_-]{43}/);
    const [{ n }] = await q<{ n: number }>("SELECT count(*)::int AS n FROM check_ins c WHERE CAST(c AS text) ~ 'hlt_[A-Za-z0-9_-]{43}'");
    expect(n).toBe(0);
  });

  test('when it has stopped, then no check-in arrives any more', async () => {
    await live.stop();
    const count = async () => (await q<{ n: number }>('SELECT count(*)::int AS n FROM check_ins WHERE at >= :startedAt', { startedAt }))[0].n;
    const before = await count();
    // Two real seconds are two simulated minutes at 60×: several loggers would have been due.
    await new Promise((r) => setTimeout(r, 2000));
    expect(await count()).toBe(before);
  });
});
