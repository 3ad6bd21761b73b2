// The demo scenario at full size (PRODUCT.md "Demo scenario"): counts, signed releases
// checked with node:crypto and the semver package, history consistent with the latest state, no logger
// token in clear anywhere, and every blocking reason of the lagging-sites screen present in the fleet
// by the device API's own offer decision.
//
// "Lagging" as PRODUCT.md journey 5 has it: an enrolled logger behind the current release of its channel by
// semver precedence. The current release of a channel is taken here as the newest release (by semver
// precedence) that has reached widening or complete at some time — "how long the site has lagged
// (since the release it lacks reached complete or widening)" — whatever state it is in now, so a
// release stopped after it widened still counts and its laggards show "release stopped/paused".
import crypto from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import { QueryTypes } from 'sequelize';
import semver from 'semver';
import { startTestApp, type TestApp } from '../helpers/app';
import { seedDemo } from '../../server/db/seed/demo';
import { demoKeyFiles } from '../../server/db/seed/demo-signing';
import { decideOffer, offerInput, type ReasonCode, type ReleaseTargeting } from '../../server/rollout/decision';
import type { InstallState } from '../../schemas/words';
import { parseSignedManifest, publicKeyOfPrivatePem, verifyManifestSignature } from '../../server/images/manifest';

// Evening in the Vale, after the daylight window has closed (sunset near 15:55 UTC at 52° N at the end
// of November, from memory; the window closes an hour before).
const now = new Date('2026-11-30T21:10:00Z');
let t: TestApp;
let seedMs = 0;

beforeAll(async () => {
  t = await startTestApp({ seed: 'none', now: () => now });
  const started = performance.now();
  await seedDemo(t.sequelize, { password: 'demo seed password', dataDir: t.dataDir, storeDir: t.storeDir, now, bcryptCost: 4, size: 'full' });
  seedMs = performance.now() - started;
  // Printed, not asserted: the seed's cost on this machine (target: well under 10 s).
  console.log(`full demo seed: ${(seedMs / 1000).toFixed(2)} s`);
});
afterAll(() => t?.close());

type Row = Record<string, unknown>;
const q = <T extends object = Row>(sql: string, replacements: Record<string, unknown> = {}): Promise<T[]> =>
  t.sequelize.query<T>(sql, { type: QueryTypes.SELECT, replacements });

describe('size and shape', () => {
  test('when the full scenario is seeded, then 60 sites hold about 240 enrolled loggers of the FL-2 model (PRODUCT.md)', async () => {
    const [counts] = await q<{ sites: number; enrolled: number; registered: number; retired: number }>(
      `SELECT (SELECT count(*) FROM sites)::int AS sites,
              count(*) FILTER (WHERE status = 'enrolled')::int AS enrolled,
              count(*) FILTER (WHERE status = 'registered')::int AS registered,
              count(*) FILTER (WHERE status = 'retired')::int AS retired FROM loggers`,
    );
    expect(counts.sites).toBe(60);
    expect(counts.enrolled).toBeGreaterThanOrEqual(230);
    expect(counts.enrolled).toBeLessThanOrEqual(250);
    expect(counts.registered).toBeGreaterThan(0);
    expect(counts.retired).toBeGreaterThan(0);
    const boards = await q<{ board: string; n: number }>("SELECT board, count(*)::int AS n FROM loggers WHERE status = 'enrolled' GROUP BY board ORDER BY board");
    expect(boards.map((b) => b.board)).toEqual(['A', 'B', 'C']);
    const channels = await q<{ channel: string; sites: number }>(
      "SELECT channel, count(DISTINCT site_id)::int AS sites FROM loggers WHERE status = 'enrolled' GROUP BY channel ORDER BY channel",
    );
    // Most sites follow stable, a few the early channel.
    const early = channels.find((r) => r.channel === 'early')!.sites;
    const stable = channels.find((r) => r.channel === 'stable')!.sites;
    expect(early).toBeGreaterThan(0);
    expect(early).toBeLessThan(stable / 5);
  });

  test('when sites are listed, then each has an integrator (Tomasz or Ade) and lies within about 20 km of the Vale at 52.1° N, 2.0° W', async () => {
    const sites = await q<{ name: string; latitude: string; longitude: string; integrators: string[] }>(
      `SELECT s.name, s.latitude, s.longitude, array_agg(u.name) AS integrators
         FROM sites s JOIN site_integrators si ON si.site_id = s.id JOIN users u ON u.id = si.user_id GROUP BY s.id`,
    );
    expect(sites).toHaveLength(60);
    // Haversine distance with the mean Earth radius 6371 km (IUGG mean radius).
    const km = (lat1: number, lon1: number, lat2: number, lon2: number) => {
      const r = Math.PI / 180;
      const a = Math.sin(((lat2 - lat1) * r) / 2) ** 2 + Math.cos(lat1 * r) * Math.cos(lat2 * r) * Math.sin(((lon2 - lon1) * r) / 2) ** 2;
      return 2 * 6371 * Math.asin(Math.sqrt(a));
    };
    for (const s of sites) {
      expect(s.integrators.length).toBe(1);
      expect(['Tomasz', 'Ade']).toContain(s.integrators[0]);
      expect(km(52.1, -2.0, Number(s.latitude), Number(s.longitude))).toBeLessThan(15);
    }
    const names = new Set(sites.map((s) => s.integrators[0]));
    expect(names).toEqual(new Set(['Tomasz', 'Ade']));
  });
});

describe('signed releases', () => {
  test('when the demo key is read from the data folder, then it is private (mode 0600) and its public half is the active signing key', async () => {
    const files = demoKeyFiles(t.dataDir);
    expect(fs.statSync(files.privateKeyFile).mode & 0o777).toBe(0o600);
    const publicKey = publicKeyOfPrivatePem(fs.readFileSync(files.privateKeyFile, 'utf8'));
    // Key id (DEVICE_API.md): SHA-256 of the DER SubjectPublicKeyInfo, first 16 hex characters — by node:crypto.
    const der = crypto.createPublicKey(fs.readFileSync(files.publicKeyFile, 'utf8')).export({ type: 'spki', format: 'der' });
    const keyId = crypto.createHash('sha256').update(der).digest('hex').slice(0, 16);
    expect(publicKey.keyId).toBe(keyId);
    const keys = await q<{ key_id: string; state: string; algorithm: string }>('SELECT key_id, state, algorithm FROM signing_keys');
    expect(keys).toEqual([{ key_id: keyId, state: 'active', algorithm: 'ed25519' }]);
  });

  test('when every release is checked, then its manifest is canonical, verifies against the demo key and names its image by SHA-256 and size', async () => {
    const publicPem = fs.readFileSync(demoKeyFiles(t.dataDir).publicKeyFile, 'utf8');
    const [model] = await q<{ id: string }>('SELECT id FROM models');
    const releases = await q<{ version: string; manifest: Buffer; signature: Buffer; image_sha256: string; size: string; boards: string[]; security_counter: number }>(
      'SELECT r.version, r.manifest, r.signature, r.image_sha256, i.size, r.boards, r.security_counter FROM releases r JOIN images i ON i.sha256 = r.image_sha256',
    );
    expect(releases.map((r) => r.version).sort(semver.compare)).toEqual(['2.0.3', '2.1.4', '2.2.0', '2.3.0', '3.0.0-beta.1', '3.0.0-rc.1']);
    for (const r of releases) {
      const manifest = parseSignedManifest(r.manifest); // refuses anything but the RFC 8785 canonical bytes
      // Ed25519 (RFC 8032) by node:crypto directly, and by the module the console uses.
      expect(crypto.verify(null, r.manifest, crypto.createPublicKey(publicPem), r.signature)).toBe(true);
      expect(verifyManifestSignature(r.manifest, r.signature, publicPem)).toBe(true);
      const image = fs.readFileSync(path.join(t.storeDir, r.image_sha256));
      const digest = crypto.createHash('sha256').update(image).digest('hex'); // FIPS 180-4 by node:crypto
      expect(digest).toBe(r.image_sha256);
      expect(manifest).toMatchObject({ image_sha256: digest, image_size: image.length, model: model.id, version: r.version, board_revisions: r.boards, security_counter: r.security_counter });
      expect(Number(r.size)).toBe(image.length);
    }
  });

  test('when the releases are read, then their states tell the story: older complete, 2.3.0 widening at 25 % with pilots, rc.1 in pilot, beta.1 stopped with a reason', async () => {
    const rows = await q<{ version: string; channel: string; state: string; share: string; upgrade_from: string | null; pilots: number; transitions: number; reason: string | null }>(
      `SELECT r.version, r.channel, r.state, r.share, r.upgrade_from,
              (SELECT count(*) FROM release_pilot_sites p WHERE p.release_id = r.id)::int AS pilots,
              (SELECT count(*) FROM release_transitions x WHERE x.release_id = r.id)::int AS transitions,
              (SELECT reason FROM release_transitions x WHERE x.release_id = r.id AND x.action = 'stop') AS reason
         FROM releases r`,
    );
    const by = Object.fromEntries(rows.map((r) => [r.version, r]));
    for (const v of ['2.0.3', '2.1.4', '2.2.0']) expect(by[v]).toMatchObject({ channel: 'stable', state: 'complete', share: '100.00' });
    expect(by['2.3.0']).toMatchObject({ channel: 'stable', state: 'widening', share: '25.00', upgrade_from: '>=2.1.0' });
    expect(by['2.3.0'].pilots).toBeGreaterThan(0);
    expect(by['3.0.0-rc.1']).toMatchObject({ channel: 'early', state: 'pilot' });
    expect(by['3.0.0-beta.1']).toMatchObject({ channel: 'early', state: 'stopped' });
    expect(by['3.0.0-beta.1'].reason).toMatch(/\w+/);
    // semver.org via the semver package: 2.0.x is outside 2.3.0's range and must step through 2.1.4.
    expect(semver.satisfies('2.0.3', by['2.3.0'].upgrade_from!)).toBe(false);
    expect(semver.satisfies('2.1.4', by['2.3.0'].upgrade_from!)).toBe(true);
    // Every release has its upload row and one row per move, oldest first, all in the past.
    const history = await q<{ at: Date; action: string }>('SELECT at, action FROM release_transitions ORDER BY release_id, id');
    expect(history.every((h) => new Date(h.at).getTime() <= now.getTime())).toBe(true);
    expect(rows.every((r) => r.transitions >= 2)).toBe(true);
  });

  test('when 2.3.0 is weighed against its trip point, then the seeded failures stay below it (the demo does not stop on its first check-in)', async () => {
    const [f] = await q<{ installed: number; failed: number; ratio: string; min: number }>(
      `SELECT count(*) FILTER (WHERE ir.state = 'installed')::int AS installed,
              count(*) FILTER (WHERE ir.state = 'failed' AND COALESCE(ir.reason, 'other') NOT IN ('connection', 'low_supply'))::int AS failed,
              max(r.trip_failure_ratio) AS ratio, max(r.trip_min_reports) AS min
         FROM install_reports ir JOIN releases r ON r.id = ir.release_id WHERE r.version = '2.3.0'`,
    );
    expect(f.failed).toBeGreaterThan(0);
    expect(f.failed / (f.installed + f.failed)).toBeLessThanOrEqual(Number(f.ratio));
  });
});

describe('history and latest state', () => {
  test('when check-ins are read, then online loggers have about 14 days of hourly history and their row holds their last check-in', async () => {
    const rows = await q<{ id: string; n: number; first: Date; last: Date; enrolled_at: Date; last_seen_at: Date; firmware: string; fw: string; supply_v: string; sv: string; readings: unknown; rd: unknown }>(
      `SELECT l.id, h.n, h.first, h.last, l.enrolled_at, l.last_seen_at, l.firmware, c.firmware AS fw, l.supply_v, c.supply_v AS sv, l.readings, c.readings AS rd
         FROM loggers l
         JOIN (SELECT logger_id, count(*)::int AS n, min(at) AS first, max(at) AS last FROM check_ins GROUP BY logger_id) h ON h.logger_id = l.id
         JOIN LATERAL (SELECT * FROM check_ins c WHERE c.logger_id = l.id ORDER BY at DESC LIMIT 1) c ON true
        WHERE l.status = 'enrolled'`,
    );
    const enrolled = await q<{ n: number }>("SELECT count(*)::int AS n FROM loggers WHERE status = 'enrolled'");
    expect(rows).toHaveLength(enrolled[0].n);
    for (const r of rows) {
      expect(new Date(r.last_seen_at).getTime()).toBe(new Date(r.last).getTime());
      expect(r.firmware).toBe(r.fw);
      expect(r.supply_v).toBe(r.sv);
      expect(r.readings).toEqual(r.rd);
      const span = (new Date(r.last).getTime() - Math.max(new Date(r.first).getTime(), new Date(r.enrolled_at).getTime())) / 3_600_000;
      expect(r.n).toBe(Math.round(span) + 1); // hourly
    }
    const long = rows.filter((r) => now.getTime() - new Date(r.last).getTime() < 15 * 60_000);
    expect(long.length).toBeGreaterThan(200);
    expect(Math.max(...rows.map((r) => r.n))).toBeGreaterThanOrEqual(14 * 24);
  });

  test('when readings follow the day, then panels give power around noon and none at midnight, and board A sits lowest with the most resets', async () => {
    const byHour = await q<{ noon: string; midnight: string }>(
      `SELECT avg((readings->>'power_w')::float8) FILTER (WHERE extract(hour FROM at) BETWEEN 11 AND 13) AS noon,
              avg((readings->>'power_w')::float8) FILTER (WHERE extract(hour FROM at) IN (23, 0, 1)) AS midnight FROM check_ins`,
    );
    expect(Number(byHour[0].noon)).toBeGreaterThan(1);
    expect(Number(byHour[0].midnight)).toBe(0);
    const boards = await q<{ board: string; supply: string; resets: number }>(
      `SELECT board, avg(supply_v) AS supply,
              sum(COALESCE((resets->>'brownout')::int, 0) + COALESCE((resets->>'watchdog')::int, 0))::int AS resets
         FROM check_ins GROUP BY board ORDER BY board`,
    );
    const [a, b, c] = boards;
    expect(Number(a.supply)).toBeLessThan(Number(b.supply));
    expect(Number(a.supply)).toBeLessThan(Number(c.supply));
    // Around 5 V at the board input (USB-class supply), within half a volt.
    for (const x of boards) expect(Math.abs(Number(x.supply) - 5)).toBeLessThan(0.5);
    expect(a.resets).toBeGreaterThan(b.resets);
    expect(a.resets).toBeGreaterThan(c.resets);
  });

  test('when install reports are compared with firmware, then every confirmed install is at or below the version running, and each running release version has its install', async () => {
    const rows = await q<{ firmware: string; version: string; state: string; confirmed_at: Date | null }>(
      `SELECT l.firmware, r.version, ir.state, ir.confirmed_at FROM install_reports ir JOIN loggers l ON l.id = ir.logger_id JOIN releases r ON r.id = ir.release_id`,
    );
    for (const r of rows.filter((x) => x.state === 'installed')) expect(semver.gte(r.firmware, r.version)).toBe(true);
    for (const r of rows.filter((x) => x.state !== 'installed')) expect(semver.lt(r.firmware, r.version)).toBe(true);
    const states = new Set(rows.map((r) => r.state));
    for (const s of ['installed', 'failed', 'downloading']) expect(states).toContain(s);
    const missing = await q<{ serial: string }>(
      `SELECT l.serial FROM loggers l JOIN releases r ON r.version = l.firmware
        WHERE l.status = 'enrolled' AND NOT EXISTS (SELECT 1 FROM install_reports ir WHERE ir.logger_id = l.id AND ir.release_id = r.id AND ir.state = 'installed')
          AND l.enrolled_at < (SELECT min(at) FROM release_transitions x WHERE x.release_id = r.id AND x.action = 'complete')`,
    );
    expect(missing).toEqual([]);
  });
});

describe('the console on the full scenario', () => {
  test('when the console reads the seeded fleet, then every list and detail answers, and release detail counts its install reports', async () => {
    const agent = await t.signedIn('admin');
    for (const url of ['/api/overview', '/api/models', '/api/sites', '/api/keys', '/api/activity', '/api/loggers?pageSize=100']) {
      const res = await agent.get(url);
      expect({ url, status: res.status }).toEqual({ url, status: 200 });
    }
    const sites = await agent.get('/api/sites');
    expect(sites.body.total).toBe(60);
    const list = await agent.get('/api/releases');
    expect(list.status).toBe(200);
    expect(list.body.total).toBe(6);
    for (const row of list.body.rows as { id: string; version: string }[]) {
      const detail = await agent.get(`/api/releases/${row.id}`);
      expect({ version: row.version, status: detail.status }).toEqual({ version: row.version, status: 200 });
      const [counts] = await q<{ installed: number; failed: number }>(
        `SELECT count(*) FILTER (WHERE state = 'installed')::int AS installed, count(*) FILTER (WHERE state = 'failed')::int AS failed
           FROM install_reports WHERE release_id = :id`,
        { id: row.id },
      );
      expect(detail.body.counts).toMatchObject(counts);
      expect(detail.body.flagged).toBe(false);
    }
    const loggers = await agent.get('/api/loggers?pageSize=25');
    const one = await agent.get(`/api/loggers/${loggers.body.rows[0].id}`);
    expect(one.status).toBe(200);
  });
});

describe('notes and activity', () => {
  test('when the activity log is read, then it tells the story: key registered, releases moved, beta.1 stopped, loggers retired and enrolled', async () => {
    // Up to the seed's clock (sign-ins by this file's tests come later).
    const rows = await q<{ action: string; summary: string }>('SELECT action, summary FROM activity WHERE at <= :now ORDER BY at, id', { now: now.toISOString() });
    const actions = new Set(rows.map((r) => r.action));
    for (const a of ['key.registered', 'release.uploaded', 'release.pilot_started', 'release.widened', 'release.completed', 'release.stopped', 'logger.retired', 'logger.enrolled', 'demo.seeded']) {
      expect(actions).toContain(a);
    }
    expect(rows[rows.length - 1].action).toBe('demo.seeded');
  });

  test('when the notes table exists, then support has left notes on loggers and a site', async () => {
    const [{ exists }] = await q<{ exists: boolean }>("SELECT to_regclass('public.notes') IS NOT NULL AS exists");
    // The notes table comes with the fleet views' migration; before it the seed writes none.
    const notes = exists ? await q<{ target_type: string }>('SELECT target_type FROM notes') : [];
    expect(exists ? new Set(notes.map((n) => n.target_type)) : new Set(['logger', 'site'])).toEqual(new Set(['logger', 'site']));
  });
});

describe('tokens', () => {
  test('when every table is searched, then no logger token is stored in clear, and the bench sheet holds a token for every logger not retired', async () => {
    const tables = await q<{ name: string }>(
      `SELECT c.relname AS name FROM pg_class c JOIN pg_namespace n ON n.oid = c.relnamespace
        WHERE n.nspname = 'public' AND c.relkind IN ('r', 'p') AND NOT c.relispartition`,
    );
    for (const { name } of tables) {
      const [{ n }] = await q<{ n: number }>(`SELECT count(*)::int AS n FROM "${name}" x WHERE CAST(x AS text) ~ 'hlt_[A-Za-z0-9_-]{43}'`);
      expect({ table: name, n }).toEqual({ table: name, n: 0 });
    }
    const lines = fs.readFileSync(path.join(t.dataDir, 'demo', 'bench-sheet.csv'), 'utf8').trim().split('\n');
    expect(lines[0]).toBe('serial,token,model,board,firmware,security_counter');
    const sheet = new Map(lines.slice(1).map((line) => line.split(',')).map(([serial, token, , board, firmware, counter]) => [serial, { token, board, firmware, counter }]));
    const loggers = await q<{ serial: string; token_digest: string; board: string; firmware: string | null; security_counter: number }>(
      "SELECT serial, token_digest, board, firmware, security_counter FROM loggers WHERE status <> 'retired'",
    );
    expect(sheet.size).toBe(loggers.length);
    for (const l of loggers) {
      const row = sheet.get(l.serial)!;
      // Stored as the SHA-256 of the token (FIPS 180-4 by node:crypto).
      expect(crypto.createHash('sha256').update(row.token).digest('hex')).toBe(l.token_digest);
      // What the logger runs, so a simulated logger starts where the seed left it.
      expect([row.board, row.firmware, row.counter]).toEqual([l.board, l.firmware ?? '', l.firmware ? String(l.security_counter) : '']);
    }
  });
});

describe('lagging sites', () => {
  test('when the offer decision is asked for every lagging logger, then each blocking reason of the lagging-sites screen occurs at some site', async () => {
    const releases = await q<ReleaseTargeting & { widenedAt: Date | null; completedAt: Date | null }>(
      `SELECT r.id, r.version, r.channel, r.state, r.share::float8 AS share, r.boards, r.upgrade_from AS "upgradeFrom",
              r.security_counter AS "securityCounter", r.daylight_window AS "daylightWindow",
              r.widened_at AS "widenedAt", r.completed_at AS "completedAt",
              COALESCE((SELECT array_agg(p.site_id) FROM release_pilot_sites p WHERE p.release_id = r.id), '{}') AS "pilotSiteIds"
         FROM releases r`,
    );
    const current = (channel: string) =>
      releases
        .filter((r) => r.channel === channel && (r.widenedAt || r.completedAt))
        .sort((a, b) => semver.rcompare(a.version, b.version))[0];
    const loggers = await q<{
      id: string; status: 'enrolled'; site_id: string; site: string; board: string; channel: 'stable' | 'early'; firmware: string; security_counter: number;
      supply_v: string | null; last_seen_at: Date; min_v: string; interval_s: number; latitude: string; longitude: string;
    }>(
      `SELECT l.id, l.status, l.site_id, s.name AS site, l.board, l.channel, l.firmware, l.security_counter, l.supply_v, l.last_seen_at,
              m.min_update_supply_v AS min_v, m.check_in_interval_s AS interval_s, s.latitude, s.longitude
         FROM loggers l JOIN sites s ON s.id = l.site_id JOIN models m ON m.id = l.model_id WHERE l.status = 'enrolled'`,
    );
    const reports = await q<{ logger_id: string; release_id: string; state: string; reason: string | null; updated_at: Date; retried_at: Date | null }>(
      'SELECT logger_id, release_id, state, reason, updated_at, retried_at FROM install_reports',
    );
    const reasons = new Map<string, Set<string>>();
    for (const l of loggers) {
      const target = current(l.channel);
      if (!target || semver.gte(l.firmware, target.version)) continue;
      let reason: string;
      if (now.getTime() - new Date(l.last_seen_at).getTime() > 3 * l.interval_s * 1000) {
        reason = 'offline';
      } else {
        const logged = reports
          .filter((x) => x.logger_id === l.id)
          .map((r) => ({ releaseId: r.release_id, state: r.state as InstallState, reason: r.reason, updatedAt: new Date(r.updated_at), retriedAt: r.retried_at && new Date(r.retried_at) }));
        const decision = decideOffer(
          offerInput(
            {
              id: l.id, status: l.status, siteId: l.site_id, board: l.board, channel: l.channel, firmware: l.firmware, securityCounter: l.security_counter,
              supplyV: l.supply_v === null ? null : Number(l.supply_v), minUpdateSupplyV: Number(l.min_v), latitude: Number(l.latitude), longitude: Number(l.longitude),
            },
            releases,
            logged,
            now,
          ),
        );
        reason = decision.considered.find((v) => v.releaseId === target.id)!.reason;
      }
      if (!reasons.has(reason)) reasons.set(reason, new Set());
      reasons.get(reason)!.add(l.site);
    }
    const expected: (ReasonCode | 'offline')[] = [
      'offline',
      'low_supply',
      'board_not_supported',
      'outside_daylight_window',
      'outside_share',
      'not_live',
      'failed_awaiting_retry',
      'needs_stepping_stone',
    ];
    expect(expected.filter((reason) => !reasons.has(reason))).toEqual([]);
  });
});
