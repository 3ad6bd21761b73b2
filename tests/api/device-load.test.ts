// Load manners of the device API (server/device-api/load.ts; DEVICE_API.md "Errors": 429 and 503 carry Retry-After):
// the per-logger rate limit, the in-flight cap, and a database that goes away and comes back.
import net from 'node:net';
import path from 'node:path';
import { QueryTypes } from 'sequelize';
import { appConfig } from '../helpers/config';
import { startTestApp, type TestApp } from '../helpers/app';
import { bearer, CHECK_IN, checkInBody, createFleet, type Fleet } from './device-fixtures';
import { createApp } from '../../server/app';
import { createDatabase } from '../../server/db';
import request from 'supertest';

let t: TestApp;
let fleet: Fleet;
beforeAll(async () => {
  process.env.HELIODOR_DEVICE_MAX_IN_FLIGHT = '1';
  t = await startTestApp();
  delete process.env.HELIODOR_DEVICE_MAX_IN_FLIGHT;
  fleet = await createFleet(t);
});
afterAll(() => t.close());


describe('rate limit', () => {
  test('when a logger checks in more than 60 times in a minute, then 429 with Retry-After, and other loggers are not affected', async () => {
    const lg = await fleet.logger();
    for (let i = 0; i < 60; i++) {
      const res = await t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('2.3.1'));
      expect(res.status).toBe(200);
    }
    const over = await t.request().post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('2.3.1'));
    expect(over.status).toBe(429);
    expect(over.headers['content-type']).toMatch(/application\/problem\+json/);
    const retry = Number(over.headers['retry-after']);
    expect(Number.isInteger(retry)).toBe(true);
    expect(retry).toBeGreaterThanOrEqual(1);
    expect(retry).toBeLessThanOrEqual(60);
    const other = await fleet.logger();
    expect((await t.request().post(CHECK_IN).set(bearer(other.token)).send(checkInBody('2.3.1'))).status).toBe(200);
  });
});

describe('overload', () => {
  test('when more check-ins are in flight than the cap allows, then 503 with Retry-After at once, and the held one completes', async () => {
    const slow = await fleet.logger();
    const quick = await fleet.logger();
    // Hold the first logger's row so its check-in waits inside the server (cap set to 1 for this file).
    const hold = await t.sequelize.transaction();
    await t.sequelize.query('SELECT id FROM loggers WHERE id = :id FOR UPDATE', { transaction: hold, replacements: { id: slow.id } });
    const held = t.request().post(CHECK_IN).set(bearer(slow.token)).send(checkInBody('2.3.1')).then((r) => r);
    // Wait until the held check-in is blocked on the row lock.
    for (let i = 0; i < 100; i++) {
      const [w] = await t.sequelize.query<{ n: number }>(
        `SELECT count(*)::int AS n FROM pg_stat_activity WHERE datname = current_database() AND wait_event_type = 'Lock'`,
        { type: QueryTypes.SELECT },
      );
      if (w.n > 0) break;
      await new Promise((r) => setTimeout(r, 20));
    }
    const refused = await t.request().post(CHECK_IN).set(bearer(quick.token)).send(checkInBody('2.3.1'));
    expect(refused.status).toBe(503);
    expect(Number(refused.headers['retry-after'])).toBeGreaterThan(0);
    await hold.commit();
    expect((await held).status).toBe(200);
    expect((await t.request().post(CHECK_IN).set(bearer(quick.token)).send(checkInBody('2.3.1'))).status).toBe(200);
  });
});

describe('database down', () => {
  test('when the database becomes unreachable, then check-ins answer 503 with Retry-After, and they succeed again by themselves when it returns', async () => {
    const lg = await fleet.logger();
    const c = t.sequelize.config;
    // A TCP relay in front of PostgreSQL that the test can cut and restore.
    const sockets = new Set<net.Socket>();
    let relay: net.Server | null = null;
    const port = await new Promise<number>((resolve) => {
      const probe = net.createServer().listen(0, '127.0.0.1', () => {
        const p = (probe.address() as net.AddressInfo).port;
        probe.close(() => resolve(p));
      });
    });
    const up = () =>
      new Promise<void>((resolve) => {
        relay = net.createServer((client) => {
          const db = net.connect(Number(c.port), c.host ?? '127.0.0.1');
          sockets.add(client).add(db);
          client.pipe(db).pipe(client);
          const drop = () => {
            client.destroy();
            db.destroy();
          };
          client.on('error', drop).on('close', drop);
          db.on('error', drop).on('close', drop);
        });
        relay.listen(port, '127.0.0.1', () => resolve());
      });
    const down = () =>
      new Promise<void>((resolve) => {
        for (const s of sockets) s.destroy();
        sockets.clear();
        relay!.close(() => resolve());
      });

    await up();
    const url = `postgres://${encodeURIComponent(c.username)}:${encodeURIComponent(c.password ?? '')}@127.0.0.1:${port}/${c.database}`;
    const sequelize = createDatabase(url, { poolMax: 2 });
    const app = createApp({
      config: appConfig({ outboxDir: path.join(t.dataDir, 'outbox'), storeDir: t.storeDir, webDir: t.dataDir, imageLimitBytes: 1024 * 1024, deviceRatePerMinute: 600 }),
      sequelize,
      mailer: { send: async () => undefined },
      readiness: { migrated: true, seeded: 'skipped' },
    });
    try {
      expect((await request(app).post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('2.3.1'))).status).toBe(200);
      await down();
      for (let i = 0; i < 3; i++) {
        const res = await request(app).post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('2.3.1'));
        expect(res.status).toBe(503);
        expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
        expect(Number(res.headers['retry-after'])).toBeGreaterThan(0);
      }
      await up();
      let status = 0;
      for (let i = 0; i < 20 && status !== 200; i++) {
        status = (await request(app).post(CHECK_IN).set(bearer(lg.token)).send(checkInBody('2.3.1'))).status;
        if (status !== 200) await new Promise((r) => setTimeout(r, 100));
      }
      expect(status).toBe(200);
    } finally {
      await app.stop();
      await sequelize.close().catch(() => undefined);
      await down().catch(() => undefined);
    }
  });
});
