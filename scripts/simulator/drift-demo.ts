// `npm run simulate -- --drift 0.5 --days 5`: a drifting release tripping, shown in one run. The
// server judges measurement drift on whole UTC days (server/rollout/drift.ts), which a simulation
// against a server on the real clock cannot wait for; so this run brings its own Heliodor:
//   1. a throwaway PostgreSQL cluster (scripts/lib/bootstrap.js pgCluster, in a temporary folder) with
//      one scratch database, migrated and seeded with the small demo scenario (Fernhollow Energy Co-op);
//   2. the server's app (server/app.ts createApp) in this process, listening on loopback, with its clock
//      injected: the clock is stepped from one scheduled check-in to the next, so days pass in seconds;
//      its trip e-mails go to the local mail fake (server/mail/fake-smtp.ts) in the temporary folder;
//   3. through the console API, as Morgan: a signing key made here, a model of its own with boards A and
//      B, loggers of board B (they install) and of board A (controls: not offered the release) enrolled
//      at one site, release 2.0.0 for board B signed with the key;
//   4. day 1 on 1.0.0; at the start of day 2 the pilot starts at the site, the board B loggers install it
//      and from their first boot on it report current × the drift (their power and energy follow);
//   5. day by day: what the loggers reported against the clear sky, the release's state and its drift
//      gauge, until the release trips (its state, stoppedBy, the drift figures, the e-mail's subject);
//   6. everything it started is stopped and the temporary folder removed, whatever happened.
import crypto, { createHash, randomBytes } from 'node:crypto';
import fs from 'node:fs';
import net from 'node:net';
import os from 'node:os';
import path from 'node:path';
import type { Server } from 'node:http';
import { QueryTypes, type Sequelize } from 'sequelize';
import type { SMTPServer } from 'smtp-server';
import { createApp } from '../../server/app';
import { createDatabase, migrate } from '../../server/db';
import { seedDemo } from '../../server/db/seed/demo';
import { demoEmail } from '../../server/db/seed/scenario';
import { createMailer } from '../../server/mail/mailer';
import { readOutbox, startFakeSmtp } from '../../server/mail/fake-smtp';
import { stopPasswordWorkers } from '../../server/auth/passwords';
import { canonicalManifest, signManifest } from '../../server/images/manifest';
import { tripHeadline } from '../../server/rollout/trip';
import { DRIFT_MIN_LOGGERS } from '../../server/rollout/drift';
import type { TripFigures } from '../../schemas/releases';
import { ConsoleSession, registerFleet, SetupError, type RegisteredLogger } from './fleet';
import { VirtualLogger, type LoggerEvent } from './logger';
import { forkRandom, seededRandom } from './random';
import type { BoardSupply } from './readings';
import { makeKey } from './threshold-demo';

type Cluster = { start(): void; stop(): void; url(database: string): string; psql(sql: string): void };
// Plain CommonJS shared with the npm scripts (no type declarations of its own).
const bootstrap = require('../lib/bootstrap.js') as { freePort(): Promise<number>; pgCluster(dataDir: string, port: number, options: { durable: boolean }): Cluster };

export type DriftDemoOptions = {
  /** The factor the installing loggers' current is multiplied by once they run the release (1: none). */
  drift: number;
  /** Simulated UTC days to run at most (the trip needs day 1 before, the install day, one whole day after: 4). */
  days: number;
  /** Loggers that install the release (the rule judges with 20 or more). */
  loggers: number;
  seed: number;
  /** The first simulated day (its UTC midnight). */
  start: Date;
  /** The story, a line at a time (stdout). */
  out: (line: string) => void;
};

export type DriftDemoResult = {
  tripped: boolean;
  state: string;
  stoppedBy: string | null;
  figures: TripFigures | null;
  mailSubject: string | null;
};

const DAY_MS = 86_400_000;
/** Check-ins every 6 h: four a day, enough for the daily energy against the clear sky (the server integrates the sky over each interval). */
const CHECK_IN_INTERVAL_S = 6 * 3600;
/**
 * A steady supply: no brown-outs and no watchdog resets, so nothing but the drift can trip the release
 * (the reset-rate rule would judge the few resets a board's own supply brings: scripts/simulator/readings.ts).
 */
const STEADY: BoardSupply = { nominalV: 5.0, spreadV: 0.01, brownoutsPerHour: 0, watchdogsPerHour: 0 };
const FIRST = '1.0.0';
const RELEASE = '2.0.0';

/** Where each run keeps its cluster: a folder of the system's temporary folder, with the running process's id in it. */
const FOLDER_PREFIX = 'heliodor-drift-';
const OWNER_FILE = 'owner.pid';

/**
 * Removes what runs that were killed outright left behind (a kill that gives no chance to clean up,
 * e.g. SIGKILL): their cluster is stopped and their folder removed. A folder whose process still runs
 * is another run's and is left alone.
 */
function sweepLeftovers(out: (line: string) => void): void {
  const base = os.tmpdir();
  for (const name of fs.readdirSync(base)) {
    if (!name.startsWith(FOLDER_PREFIX)) continue;
    const dir = path.join(base, name);
    let owner: number | null = null;
    try {
      owner = Number(fs.readFileSync(path.join(dir, OWNER_FILE), 'utf8'));
    } catch {
      // No owner yet: a run that is just starting, unless the folder is old.
      if (Date.now() - fs.statSync(dir).mtimeMs < 10 * 60_000) continue;
    }
    if (owner !== null && Number.isInteger(owner) && owner > 0) {
      try {
        process.kill(owner, 0);
        continue; // that run is still going
      } catch (error) {
        if ((error as NodeJS.ErrnoException).code === 'EPERM') continue;
      }
    }
    try {
      bootstrap.pgCluster(dir, 0, { durable: false }).stop();
    } finally {
      fs.rmSync(dir, { recursive: true, force: true });
    }
    out(`removed the scratch cluster of an earlier run that was stopped before it could clean up (${dir})`);
  }
}

const median = (xs: number[]): number | null => {
  if (xs.length === 0) return null;
  const s = [...xs].sort((a, b) => a - b);
  const mid = Math.floor(s.length / 2);
  return s.length % 2 ? s[mid] : (s[mid - 1] + s[mid]) / 2;
};
const signed = (x: number | null, digits: number, unit: string) => {
  if (x === null) return 'not judged';
  const v = Math.abs(x).toFixed(digits);
  return `${Number(v) === 0 ? '±' : x > 0 ? '+' : '−'}${v}${unit}`;
};
const signedPct = (x: number | null) => signed(x === null ? null : x * 100, 1, ' %');
const hhmm = (d: Date) => d.toISOString().slice(11, 16);
const dayOf = (d: Date) => d.toISOString().slice(0, 10);

type ReleaseView = { id: string; state: string; stoppedBy: string | null; tripFigures: TripFigures | null };
type DashboardView = { trip: { drift: { controls: number; minLoggers: number; energy: { loggers: number; shift: number | null; judged: boolean; threshold: number } } } };

export async function runDriftDemo(o: DriftDemoOptions): Promise<DriftDemoResult> {
  const { out } = o;
  if (o.loggers < DRIFT_MIN_LOGGERS || o.loggers > 200) {
    throw new SetupError(`--days needs --loggers from ${DRIFT_MIN_LOGGERS} to 200: the drift rule judges a release over at least ${DRIFT_MIN_LOGGERS} loggers`);
  }
  const start = new Date(Math.floor(o.start.getTime() / DAY_MS) * DAY_MS);
  const end = new Date(start.getTime() + o.days * DAY_MS);
  const controlsCount = Math.max(4, Math.round(o.loggers / 5));
  out('Drift demo: this run starts its own Heliodor in this process, on a scratch database in a throwaway');
  out('PostgreSQL, with a stepped clock (simulated days pass in seconds). It does not touch the Heliodor');
  out('`npm start` runs, and removes everything it made when it ends.');
  out(`Simulated ${dayOf(start)} … ${dayOf(new Date(end.getTime() - 1))}: ${o.loggers} loggers install ${RELEASE} and report current × ${o.drift} from their first boot on it; ${controlsCount} controls at the same site stay on ${FIRST}.`);
  out('');

  sweepLeftovers(out);
  const tmp = fs.mkdtempSync(path.join(os.tmpdir(), FOLDER_PREFIX));
  fs.writeFileSync(path.join(tmp, OWNER_FILE), String(process.pid));
  fs.chmodSync(tmp, 0o755); // the cluster's owner (postgres, when run as root) must enter it
  let cluster: Cluster | null = null;
  let sequelize: Sequelize | null = null;
  let smtp: SMTPServer | null = null;
  let server: Server | null = null;
  let app: ReturnType<typeof createApp> | null = null;
  // Ctrl-C (or a TERM) ends the run at the next check-in, through the same clean-up as the end.
  let interrupted: string | null = null;
  const onSignal = (signal: NodeJS.Signals) => {
    interrupted = signal;
  };
  process.on('SIGINT', onSignal);
  process.on('SIGTERM', onSignal);
  const stillOn = () => {
    if (interrupted) throw new SetupError(`interrupted (${interrupted}); the run stopped early and removed what it made`);
  };
  try {
    // 1. The throwaway cluster and its scratch database.
    cluster = bootstrap.pgCluster(tmp, await bootstrap.freePort(), { durable: false });
    cluster.start();
    cluster.psql('CREATE DATABASE heliodor_drift');
    sequelize = createDatabase(cluster.url('heliodor_drift'), { poolMax: 5 });
    stillOn();
    await migrate(sequelize);
    const password = crypto.randomBytes(18).toString('base64url');
    const storeDir = path.join(tmp, 'store');
    fs.mkdirSync(storeDir);
    await seedDemo(sequelize, { password, dataDir: tmp, storeDir, now: start, bcryptCost: 10, size: 'small' });

    // 2. The mail fake and the app, on the stepped clock.
    const outboxDir = path.join(tmp, 'outbox');
    const smtpPort = await bootstrap.freePort();
    smtp = await startFakeSmtp(smtpPort, outboxDir);
    let clock = new Date(start);
    app = createApp({
      config: {
        jwtSecret: crypto.randomBytes(32).toString('base64url'),
        dataKey: crypto.randomBytes(32).toString('base64url'),
        demo: true,
        devMailbox: true,
        outboxDir,
        storeDir,
        webDir: path.join(tmp, 'web'),
        publicUrl: undefined,
        imageLimitBytes: 16 * 1024 * 1024,
        deviceRatePerMinute: 600,
        production: false,
      },
      sequelize,
      mailer: createMailer({ host: '127.0.0.1', port: smtpPort, secure: false, from: 'Heliodor <heliodor@localhost>' }),
      readiness: { migrated: true, seeded: 'complete' },
      now: () => clock,
    });
    const listening = app;
    server = await new Promise<Server>((resolve) => {
      const s = listening.listen(0, '127.0.0.1', () => resolve(s));
    });
    const baseUrl = `http://127.0.0.1:${(server.address() as net.AddressInfo).port}`;
    out(`Heliodor (scratch database heliodor_drift) on ${baseUrl}, clock at ${clock.toISOString()}`);
    const signIn = async () => {
      const s = new ConsoleSession(baseUrl);
      await s.signIn(demoEmail('Morgan'), password);
      return s;
    };
    let session = await signIn();
    stillOn();

    // 3. The key, the model, the site, the loggers and the release.
    const key = makeKey('Drift demo key');
    await session.request('POST', '/api/keys', { name: key.name, publicKeyPem: key.publicKey.pem });
    const modelName = 'FL-2D drift demo';
    const model = await session.request<{ id: string }>('POST', '/api/models', {
      name: modelName,
      boards: [
        { label: 'A', note: 'linear regulator' },
        { label: 'B', note: 'switching regulator' },
      ],
      minUpdateSupplyV: 4.6,
      checkInIntervalS: CHECK_IN_INTERVAL_S,
      busVMax: 36,
      shuntFullScaleV: 0.08192,
      tempResolutions: [12],
    });
    const sites = (await session.request<{ rows: { id: string; name: string; latitude: number | null; longitude: number | null }[] }>('GET', '/api/sites')).rows;
    const site = sites.find((s) => s.latitude !== null && s.longitude !== null);
    if (!site) throw new SetupError('the demo scenario has no site with coordinates');
    const random = seededRandom(o.seed);
    const register = (count: number, board: string, prefix: string) =>
      registerFleet(session, { count, model: model.id, siteIds: [site.id], boards: [board], firmware: () => FIRST, random, serialPrefix: prefix });
    const installing = await register(o.loggers, 'B', 'DRB');
    const controls = await register(controlsCount, 'A', 'DRA');
    out(`${modelName}: ${installing.length} loggers on board B and ${controls.length} controls on board A enrolled at ${site.name} (${site.latitude}, ${site.longitude}), all on ${FIRST}, checking in every ${CHECK_IN_INTERVAL_S / 3600} h on a steady supply (no resets)`);

    const image = Buffer.concat([Buffer.from(`Heliodor drift demo image\n${modelName}\nfirmware ${RELEASE}\n\n`), randomBytes(16 * 1024)]);
    const manifest = Buffer.from(
      canonicalManifest({
        board_revisions: ['B'],
        format: 1,
        image_sha256: createHash('sha256').update(image).digest('hex'),
        image_size: image.length,
        issued_at: clock.toISOString().replace(/\.\d{3}Z$/, 'Z'),
        model: model.id,
        security_counter: 1,
        version: RELEASE,
      }),
      'utf8',
    );
    const form = new FormData();
    form.append('image', new Blob([image], { type: 'application/octet-stream' }), `fl2d-${RELEASE}.bin`);
    form.append('manifest', new Blob([manifest], { type: 'application/json' }), 'manifest.json');
    form.append('signature', signManifest(manifest, key.privateKeyPem));
    form.append('notes', 'Drift demo: its measurement code scales the current it reads.');
    const release = await session.request<{ id: string }>('POST', '/api/releases', form);
    await session.request('PATCH', `/api/releases/${release.id}`, { pilotSiteIds: [site.id], daylightWindow: false });
    out(`release ${RELEASE} for board B uploaded, signed, its pilot site ${site.name} (draft until day 2)`);
    out('');

    // 4. The virtual loggers, on the stepped clock.
    const counts = { checkIns: 0, installs: 0, drifted: 0, errors: [] as string[] };
    const onEvent = (e: LoggerEvent) => {
      if (e.kind === 'check-in' && e.status === 200) counts.checkIns++;
      else if (e.kind === 'drifted') counts.drifted++;
      else if (e.kind === 'error') counts.errors.push(e.message);
    };
    const make = (who: RegisteredLogger) =>
      new VirtualLogger({ ...who, supply: STEADY }, { baseUrl, clock: () => clock, random: forkRandom(random), trustedKeys: [key.publicKey], failRate: 0, interruptRate: 0, drift: o.drift, onEvent });
    const fleet = [...installing.map(make), ...controls.map(make)];
    const group = new Map<string, 'installing' | 'control'>([...installing.map((l) => [l.id, 'installing'] as const), ...controls.map((l) => [l.id, 'control'] as const)]);

    /** What the server recorded (logger_days): each logger's energy against the clear sky per day, as a shift from its day 1. */
    const energyShifts = async (day: string) => {
      const rows = await sequelize!.query<{ id: string; day: string; energy: number; clear: number }>(
        `SELECT logger_id AS id, to_char(day, 'YYYY-MM-DD') AS day, SUM(energy_wh)::float8 AS energy, SUM(clear_sky_wh)::float8 AS clear
           FROM logger_days WHERE logger_id IN (:ids) AND day IN (CAST(:first AS date), CAST(:day AS date)) GROUP BY logger_id, day`,
        { type: QueryTypes.SELECT, replacements: { ids: [...group.keys()], first: dayOf(start), day } },
      );
      const ratio = new Map<string, number>();
      for (const r of rows) if (r.clear > 0) ratio.set(`${r.id} ${r.day}`, r.energy / r.clear);
      const shifts = { installing: [] as number[], control: [] as number[] };
      for (const [id, g] of group) {
        const before = ratio.get(`${id} ${dayOf(start)}`);
        const now = ratio.get(`${id} ${day}`);
        if (before && now !== undefined) shifts[g].push(now / before - 1);
      }
      return { installing: median(shifts.installing), control: median(shifts.control) };
    };
    const releaseNow = async () => {
      session = await signIn(); // a fresh session at the stepped clock
      const r = await session.request<ReleaseView>('GET', `/api/releases/${release.id}`);
      const d = await session.request<DashboardView>('GET', `/api/releases/${release.id}/dashboard`);
      return { r, drift: d.trip.drift };
    };

    let tripped: { at: Date } | null = null;
    let pilotAt: Date | null = null;
    for (let day = 0; day < o.days && !tripped; day++) {
      const dayStart = new Date(start.getTime() + day * DAY_MS);
      const dayEnd = new Date(dayStart.getTime() + DAY_MS);
      const at = { checkIns: counts.checkIns, installs: counts.installs, drifted: counts.drifted };
      if (day === 1) {
        clock = dayStart;
        await session.request('POST', `/api/releases/${release.id}/transitions`, { action: 'start_pilot' });
        pilotAt = dayStart;
      }
      for (;;) {
        const next = fleet.filter((l) => !l.refused).reduce<VirtualLogger | null>((a, l) => (!a || l.nextCheckInAt < a.nextCheckInAt ? l : a), null);
        if (!next || next.nextCheckInAt.getTime() >= dayEnd.getTime()) break;
        stillOn();
        clock = new Date(Math.max(clock.getTime(), next.nextCheckInAt.getTime()));
        const outcome = await next.cycle(clock);
        if (outcome?.state === 'installed') counts.installs++;
        const state = (await sequelize.query<{ state: string }>('SELECT state FROM releases WHERE id = :id', { type: QueryTypes.SELECT, replacements: { id: release.id } }))[0].state;
        if (state === 'stopped') {
          tripped = { at: new Date(clock) };
          break;
        }
      }
      const { r, drift } = await releaseNow();
      const seen = await energyShifts(dayOf(dayStart));
      const running = new Map<string, number>();
      for (const l of fleet) running.set(l.firmware, (running.get(l.firmware) ?? 0) + 1);
      const e = drift.energy;
      out(`Day ${day + 1}  ${dayOf(dayStart)}${tripped ? ` (until ${hhmm(tripped.at)} UTC)` : ''}`);
      if (day === 1 && pilotAt) out(`  ${hhmm(pilotAt)} UTC  pilot of ${RELEASE} started at ${site.name}`);
      out(`  check-ins ${counts.checkIns - at.checkIns}, installs ${counts.installs - at.installs}${counts.drifted > at.drifted ? `, ${counts.drifted - at.drifted} loggers now report current × ${o.drift}` : ''}; running ${[...running].map(([v, n]) => `${v} × ${n}`).join(', ')}`);
      if (day === 0) out('  reported energy against the clear sky: day 1 is each logger\'s reference');
      else if (!tripped) out(`  reported energy against the clear sky, shift from day 1 (median): board B ${signedPct(seen.installing)}, controls ${signedPct(seen.control)}`);
      out(`  release ${RELEASE} ${r.state}${r.stoppedBy ? ` (stoppedBy ${r.stoppedBy})` : ''}; drift gauge: ${e.judged ? `energy ${signedPct(e.shift)} over ${e.loggers} loggers, ${drift.controls} controls (trip point ${Math.round(e.threshold * 100)} %)` : `not judged yet (${e.loggers} of ${drift.minLoggers} loggers have a whole UTC day after their install day${day >= 1 && !tripped ? ' — this day is not over' : ''})`}`);
    }
    out('');

    // 5. The outcome.
    const { r } = await releaseNow();
    let mailSubject: string | null = null;
    if (r.state === 'stopped') {
      for (let i = 0; i < 50 && !mailSubject; i++) {
        mailSubject = readOutbox(outboxDir).find((m) => m.subject.includes(`Release ${RELEASE} of ${modelName} tripped`))?.subject ?? null;
        if (!mailSubject) await new Promise((resolve) => setTimeout(resolve, 100));
      }
      const f = r.tripFigures;
      out(`TRIP  ${tripped ? `${tripped.at.toISOString().slice(0, 16).replace('T', ' ')} UTC  ` : ''}release ${RELEASE} state ${r.state}, stoppedBy ${r.stoppedBy}`);
      if (f) out(`      ${tripHeadline(f)}`);
      if (f && f.rule === 'measurement_drift') {
        out(`      drift figures: energy ${signedPct(f.energyShift)} over ${f.energyLoggers} loggers, probe temperature ${signed(f.tempShiftC, 1, ' °C')}, flagged readings ${signed(f.flaggedShift === null ? null : f.flaggedShift * 100, 1, ' points')}, ${f.controls} controls; trip points ${Math.round(f.tripPoints.tripDriftEnergy * 100)} %, ${f.tripPoints.tripDriftTempC} °C, ${Number((f.tripPoints.tripDriftFlagged * 100).toFixed(1))} points`);
      }
      out(`      mail: ${mailSubject ? `"${mailSubject}"` : 'none arrived in the mail fake'}`);
    } else {
      out(`NO TRIP  release ${RELEASE} is ${r.state} after ${o.days} simulated days${o.drift === 1 ? ' (no drift: as it should be)' : ''}`);
    }
    if (counts.errors.length) out(`errors: ${counts.errors.length} (first: ${counts.errors[0]})`);
    return { tripped: r.state === 'stopped' && r.stoppedBy === 'trip', state: r.state, stoppedBy: r.stoppedBy, figures: r.tripFigures, mailSubject };
  } finally {
    // 6. Stop what this run started, in reverse order, and remove the scratch cluster.
    process.off('SIGINT', onSignal);
    process.off('SIGTERM', onSignal);
    if (app) await app.later.settled().catch(() => undefined);
    if (server) {
      server.closeAllConnections();
      await new Promise((resolve) => server!.close(resolve));
    }
    if (app) await app.stop().catch(() => undefined);
    if (sequelize) await sequelize.close().catch(() => undefined);
    if (smtp) await new Promise((resolve) => smtp!.close(() => resolve(null)));
    await stopPasswordWorkers().catch(() => undefined);
    try {
      cluster?.stop();
    } finally {
      fs.rmSync(tmp, { recursive: true, force: true });
      out('scratch database and its cluster removed');
    }
  }
}
