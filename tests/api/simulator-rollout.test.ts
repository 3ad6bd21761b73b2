// The fleet simulator (scripts/simulator/) against the real app: 200 virtual loggers go through a
// release's pilot → 25 % → 100 % rollout, with interrupted downloads resumed along the way. The fleet
// comes from every source the simulator knows: the demo scenario's bench sheet, loggers registered and
// enrolled through the console API, and a bench sheet of loggers flashed earlier (rows put straight in
// the database, as the registry would have stored them, to keep the test fast).
// Sources: DEVICE_API.md "Who gets an offer" (eligibility, pilot sites, the bucket formula — computed
// here with node:crypto SHA-256, FIPS 180-4), semver.org (upgrade-from range, via the semver package),
// PRODUCT.md (demo scenario). The clock is simulated: nothing sleeps.
import crypto from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import { QueryTypes } from 'sequelize';
import semver from 'semver';
import { csrf, listeningApp, testPassword } from '../helpers/app';
import { buildFleet, ConsoleSession, FleetTally, firmwareByBoard, readBenchSheet, registerFleet, runFleet } from '../../scripts/simulator/fleet';
import type { VirtualLogger } from '../../scripts/simulator/logger';
import { seededRandom } from '../../scripts/simulator/random';
import { canonicalManifest, parsePublicKeyPem, signManifest } from '../../server/images/manifest';
import { Logger } from '../../server/db/models';
import { newToken } from '../../server/auth/tokens';

const FLEET_SIZE = 200;
const REGISTERED_THROUGH_API = 36;
const VERSION = '2.3.0';
const UPGRADE_FROM = '>=2.1.0';
let clock = new Date('2026-06-21T08:00:00Z');
const app = listeningApp({ seed: 'demo', now: () => clock });

/** The contract's bucket: first 4 bytes of SHA-256("<logger id>:<release id>"), unsigned big-endian, mod 10 000. */
function bucket(loggerId: string, releaseId: string): number {
  return crypto.createHash('sha256').update(`${loggerId}:${releaseId}`).digest().readUInt32BE(0) % 10_000;
}

type Row = { id: string; serial: string; board: string; channel: string; status: string; site_id: string | null };

describe('a simulated fleet through a staged rollout', () => {
  test('when 200 loggers go through pilot → 25 % → 100 %, then each stage reaches exactly its cohort, every eligible logger ends on the new version, and no ineligible logger gets it', async () => {
    // Morgan (admin) registers the signing key and loggers; Priya (release engineer) ships.
    const morgan = new ConsoleSession(app.base);
    await morgan.signIn('morgan@fernhollow.example', testPassword);
    const priya = app.t.agent();
    expect((await priya.post('/api/auth/sign-in').send({ email: 'priya@fernhollow.example', password: testPassword })).status).toBe(200);
    const pair = crypto.generateKeyPairSync('ed25519');
    const privatePem = String(pair.privateKey.export({ type: 'pkcs8', format: 'pem' }));
    const publicPem = String(pair.publicKey.export({ type: 'spki', format: 'pem' }));
    await morgan.request('POST', '/api/keys', { name: 'Fernhollow release key 2026', publicKeyPem: publicPem });
    const modelId = (await morgan.request<{ rows: { id: string; name: string }[] }>('GET', '/api/models')).rows.find((m) => m.name === 'FL-2 field logger')!.id;
    const sites = (await morgan.request<{ rows: { id: string; name: string }[] }>('GET', '/api/sites')).rows;

    // The fleet. Demo bench sheet: 14 loggers (12 enrolled, 2 on the shelf).
    const random = seededRandom(20261201);
    const firmware = firmwareByBoard('A=2.1.4,B=2.2.0,C=2.2.0');
    const demoBench = readBenchSheet(fs.readFileSync(path.join(app.t.dataDir, 'demo', 'bench-sheet.csv'), 'utf8'));
    // Registered and enrolled through the console API, some on the early channel.
    const registered = await registerFleet(morgan, { count: REGISTERED_THROUGH_API, earlyShare: 0.2, firmware, random, serialPrefix: 'FL2-SIM' });
    // Flashed earlier: enrolled across the sites, a few early-channel ones among them; their bench sheet is read back as the simulator reads it.
    const earlier = Array.from({ length: FLEET_SIZE - demoBench.length - registered.length }, (_, i) => ({
      ...newToken('hlt_'),
      serial: `FL2-B${String(i + 1).padStart(5, '0')}`,
      board: ['A', 'B', 'C'][i % 3],
      channel: i % 9 === 4 ? 'early' : 'stable',
      siteId: sites[i % sites.length].id,
    }));
    await Logger.bulkCreate(
      earlier.map((e) => ({
        serial: e.serial, modelId, board: e.board, channel: e.channel as 'stable' | 'early', status: 'enrolled' as const, tokenDigest: e.digest,
        tokenIssuedAt: clock, siteId: e.siteId, enrolledAt: clock, registeredBy: null,
      })),
    );
    const earlierBench = readBenchSheet(['serial,token,model,board', ...earlier.map((e) => `${e.serial},${e.token},FL-2 field logger,${e.board}`)].join('\n'));
    const identities = [
      ...[...demoBench, ...earlierBench].map((r) => ({ serial: r.serial, token: r.token, board: r.board, firmware: firmware(r.board) })),
      ...registered,
    ];
    expect(identities).toHaveLength(FLEET_SIZE);

    // The release: 2.3.0 for boards B and C, from 2.1.0 on, uploaded with its signed manifest; two pilot sites.
    const image = crypto.randomBytes(96 * 1024 + 7);
    const manifest = canonicalManifest({
      board_revisions: ['B', 'C'], format: 1, image_sha256: crypto.createHash('sha256').update(image).digest('hex'), image_size: image.length,
      issued_at: '2026-06-20T10:00:00Z', model: modelId, security_counter: 1, version: VERSION,
    });
    const upload = await priya
      .post('/api/releases')
      .set(csrf)
      .attach('image', image, { filename: 'fl2-2.3.0.bin', contentType: 'application/octet-stream' })
      .attach('manifest', Buffer.from(manifest), { filename: 'manifest.json', contentType: 'application/json' })
      .field('signature', signManifest(manifest, privatePem));
    expect(upload.status).toBe(201);
    const releaseId: string = upload.body.id;
    const pilotSiteIds = sites.filter((s) => s.name === 'Aldmere Village Hall' || s.name === 'Hollins Dairy').map((s) => s.id);
    expect(pilotSiteIds).toHaveLength(2);
    expect((await priya.patch(`/api/releases/${releaseId}`).set(csrf).send({ boards: ['B', 'C'], upgradeFrom: UPGRADE_FROM, pilotSiteIds })).status).toBe(200);
    const move = async (body: Record<string, unknown>) => expect((await priya.post(`/api/releases/${releaseId}/transitions`).set(csrf).send(body)).status).toBe(200);

    // Who is eligible, from the database's view of each logger and the contract's rules.
    const rows = await app.t.sequelize.query<Row>('SELECT id, serial, board, channel, status, site_id FROM loggers', { type: QueryTypes.SELECT });
    const bySerial = new Map(rows.map((r) => [r.serial, r]));
    const runningAtStart = new Map(identities.map((i) => [i.serial, i.firmware]));
    const eligible = (r: Row) =>
      r.status === 'enrolled' && r.channel === 'stable' && ['B', 'C'].includes(r.board) &&
      semver.satisfies(runningAtStart.get(r.serial)!, UPGRADE_FROM, { includePrerelease: true }) && semver.gt(VERSION, runningAtStart.get(r.serial)!);
    const atPilotSite = (r: Row) => r.site_id !== null && pilotSiteIds.includes(r.site_id);
    const fleetRows = identities.map((i) => bySerial.get(i.serial)!);
    const serialsWhere = (pred: (r: Row) => boolean) => fleetRows.filter(pred).map((r) => r.serial).sort();
    // The fleet holds every kind of logger the rules tell apart.
    expect(serialsWhere((r) => eligible(r) && atPilotSite(r)).length).toBeGreaterThan(0);
    expect(serialsWhere((r) => r.board === 'A').length).toBeGreaterThan(0);
    expect(serialsWhere((r) => r.channel === 'early' && r.board !== 'A').length).toBeGreaterThan(0);
    expect(serialsWhere((r) => r.status === 'registered').length).toBeGreaterThan(0);

    const tally = new FleetTally();
    const loggers = buildFleet(
      identities,
      { baseUrl: app.base, clock: () => clock, random, trustedKeys: [parsePublicKeyPem(publicPem)], interruptRate: 0.3, spreadS: 900 },
      tally,
    );
    const onNewVersion = () => loggers.filter((l: VirtualLogger) => l.firmware === VERSION).map((l) => l.serial).sort();
    const run = (seconds: number) =>
      runFleet(loggers, {
        clock: () => clock,
        until: new Date(clock.getTime() + seconds * 1000),
        concurrency: 24,
        tally,
        // Simulated time moves on in steps of five minutes, so loggers due in the same five minutes check in together.
        waitUntil: async (at) => {
          clock = new Date(Math.max(clock.getTime(), Math.ceil(at.getTime() / 300_000) * 300_000));
        },
      });
    /**
     * Runs the fleet until the loggers on the new version are the expected ones and none is between
     * install and reboot, in steps of 25 simulated minutes (one check-in interval of 900 s ± 10 %, rounded up to
     * five minutes, and a little), for at most 12 simulated hours: a busy server may stretch next_check_in_s up to 4×.
     */
    const stage = async (expected: string[]) => {
      for (let step = 0; step < 36; step++) {
        await run(1500);
        if (JSON.stringify(onNewVersion()) === JSON.stringify(expected) && loggers.every((l) => l.awaitingReboot === null)) break;
      }
      expect(onNewVersion()).toEqual(expected);
    };

    await move({ action: 'start_pilot' });
    expect(onNewVersion()).toEqual([]);
    const pilot = serialsWhere((r) => eligible(r) && atPilotSite(r));
    await stage(pilot);

    await move({ action: 'widen', share: 25 });
    const quarter = serialsWhere((r) => eligible(r) && (atPilotSite(r) || bucket(r.id, releaseId) < 2500));
    expect(quarter.length).toBeGreaterThan(pilot.length);
    await stage(quarter);

    await move({ action: 'complete' });
    const everyone = serialsWhere(eligible);
    expect(everyone.length).toBeGreaterThan(quarter.length);
    await stage(everyone);

    // The server agrees: versions on record, confirmed installs, nothing for anyone else.
    const after = await app.t.sequelize.query<{ serial: string; firmware: string | null; state: string | null; confirmed: boolean }>(
      `SELECT l.serial, l.firmware, ir.state, ir.confirmed_at IS NOT NULL AS confirmed
         FROM loggers l LEFT JOIN install_reports ir ON ir.logger_id = l.id AND ir.release_id = :releaseId`,
      { type: QueryTypes.SELECT, replacements: { releaseId } },
    );
    const inFleet = new Set(identities.map((i) => i.serial));
    const recorded = after.filter((a) => inFleet.has(a.serial));
    expect(recorded).toHaveLength(FLEET_SIZE);
    for (const r of recorded) {
      if (eligible(bySerial.get(r.serial)!)) expect(r).toEqual({ serial: r.serial, firmware: VERSION, state: 'installed', confirmed: true });
      else expect(r).toEqual({ serial: r.serial, firmware: runningAtStart.get(r.serial), state: null, confirmed: false });
    }
    const release = await priya.get(`/api/releases/${releaseId}`);
    expect(release.body).toMatchObject({ state: 'complete', counts: { installed: everyone.length, failed: 0 } });
    expect(tally.counts).toMatchObject({ installs: everyone.length, failures: 0, errors: 0 });
    expect(tally.counts.interruptions).toBeGreaterThan(0);
  }, 300_000);
});
