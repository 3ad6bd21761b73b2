// The living demo (HELIODOR_ENV=demo with HELIODOR_DEMO_LIVE=1, the default): the demo fleet keeps
// checking in with this server, so the overview, the version matrix, lagging sites and a live
// release's dashboard change while someone watches.
//
// Each enrolled demo logger is a virtual logger of the reference simulator (scripts/simulator/), and
// speaks to the server exactly as a logger in the field does: HTTP requests to the server's own
// listening port on loopback, with the logger's own token (server/demo/tokens.ts), through the device
// API — check-ins on the interval the server sets (the first one spread across it), readings that
// follow the sun at its site, offers taken, images downloaded (resumed after drops), verified against
// the registered signing keys, installed and reported. Nothing is written to the database here; the
// only reads are the roster (which demo loggers are enrolled, where, on which version) and the keys
// the firmware trusts, refreshed every minute so loggers enrolled or retired in the console join or
// leave.
//
// Who is who comes from the seed's fleet plan (server/db/seed/fleet-plan.ts), planned again from the
// time the full scenario was seeded: silent loggers stay silent (the Westby mast's power cut), the
// sagging supply stays below the supply guard, unstable boards brown out every few hours, the stuck
// temperature probe keeps reading 85 °C, boards with bad flash fail every install, weak links drop
// half their downloads. Every other install fails at the demo's failure rate (2 % by default), held
// back wherever one more failure would take a release past 80 % of its trip point (FailureBudget), so
// the trip gauges move without tripping — unless someone raises the rate to the trip point or beyond
// (HELIODOR_DEMO_FAIL_RATE), or lowers a release's trip point below it: then releases trip as in the field.
import { createHash, randomInt } from 'node:crypto';
import { QueryTypes, type Sequelize } from 'sequelize';
import semver from 'semver';
import type pino from 'pino';
import { VirtualLogger, type CheckInRequest, type LoggerEnvironment, type LoggerEvent, type LoggerIdentity, type Offer } from '../../scripts/simulator/logger';
import { acceleratedClock, FleetTally, runFleet } from '../../scripts/simulator/fleet';
import { forkRandom, seededRandom, type Random } from '../../scripts/simulator/random';
import { boardSupplies, typicalPanel, type BoardSupply } from '../../scripts/simulator/readings';
import { parsePublicKeyPem, type SigningPublicKey } from '../images/manifest';
import { planFleet, type Role } from '../db/seed/fleet-plan';
import { demoLoggerToken, existingDemoSecret } from './tokens';
import { SQL_WORDS } from '../db/sql-words';

export type LiveDemoSettings = {
  /** Simulated seconds per real second (1: real time). Tests and demonstrations may run it faster. */
  speed: number;
  /** Share of installs that fail while writing the image (0–1). */
  failRate: number;
};

/** How one demo logger behaves live, from its parts in the fleet plan. */
export type LiveBehaviour = {
  runs: boolean;
  supply?: BoardSupply;
  /** The temperature the probe keeps reporting (a probe that does not answer). */
  probeStuckC?: number;
  /** Share of installs that fail: the demo's rate (held back by the failure budget), or 1 for bad flash. */
  failRate: number;
  /** Share of download attempts cut short. */
  interruptRate: number;
};

/** Power-on value of the temperature register, 0550h = 85 °C (the probe data sheet, docs/SOURCES.md §9): what a probe that never converts reads. */
export const PROBE_POWER_ON_C = 85;
/** Supply of the logger beside the new pump controller: about 4.44 V, below the FL-2's 4.6 V update minimum (as the seeded history). */
const SAGGING_SUPPLY_V = 4.44;
/** Brown-outs of an unstable board: one every five hours or so (as the seeded history's last day). */
const UNSTABLE_BROWNOUTS_PER_HOUR = 0.2;
/** Share of download attempts cut short: an ordinary link, and a weak one. */
const DROPS = { usual: 0.1, weak: 0.5 };

export function behaviourOf(roles: readonly Role[], board: string, settings: Pick<LiveDemoSettings, 'failRate'>): LiveBehaviour {
  if (roles.includes('silent') || roles.includes('retired')) return { runs: false, failRate: 0, interruptRate: 0 };
  const usual = boardSupplies[board] ?? boardSupplies.B;
  const behaviour: LiveBehaviour = { runs: true, failRate: settings.failRate, interruptRate: DROPS.usual };
  if (roles.includes('low_supply')) behaviour.supply = { ...usual, nominalV: SAGGING_SUPPLY_V, spreadV: 0.03 };
  if (roles.includes('unstable')) behaviour.supply = { ...(behaviour.supply ?? usual), brownoutsPerHour: UNSTABLE_BROWNOUTS_PER_HOUR };
  if (roles.includes('probe_fault')) behaviour.probeStuckC = PROBE_POWER_ON_C;
  // Bad flash: every install fails until someone swaps the board.
  if (roles.includes('failed_storage') || roles.includes('straggler')) behaviour.failRate = 1;
  if (roles.includes('failed_connection') || roles.includes('stepping_stone')) behaviour.interruptRate = DROPS.weak;
  return behaviour;
}

/** A virtual logger whose probe may be stuck; everything else is the reference client's own. */
class DemoLogger extends VirtualLogger {
  constructor(
    readonly loggerId: string,
    identity: LoggerIdentity,
    env: LoggerEnvironment,
    private readonly probeStuckC: number | undefined,
  ) {
    super(identity, env);
  }

  override checkInBody(now: Date): CheckInRequest {
    const body = super.checkInBody(now);
    if (this.probeStuckC !== undefined) body.readings = { ...body.readings, temp_c: this.probeStuckC };
    return body;
  }
}

type RosterRow = {
  id: string;
  serial: string;
  board: string;
  token_digest: string;
  firmware: string | null;
  security_counter: number;
  last_seen_at: Date | null;
  model_id: string;
  panel_wp: number | null;
  latitude: number | null;
  longitude: number | null;
  interval_s: number;
};

async function roster(sequelize: Sequelize): Promise<RosterRow[]> {
  return sequelize.query<RosterRow>(
    `SELECT l.id, l.serial, l.board, l.token_digest, l.firmware, l.security_counter, l.last_seen_at, l.model_id,
            CAST(l.install->>'panelWp' AS float8) AS panel_wp, s.latitude::float8 AS latitude, s.longitude::float8 AS longitude,
            m.check_in_interval_s AS interval_s
       FROM loggers l JOIN models m ON m.id = l.model_id LEFT JOIN sites s ON s.id = l.site_id
      WHERE l.status = :enrolled`,
    { type: QueryTypes.SELECT, replacements: SQL_WORDS },
  );
}

/** The keys the demo firmware trusts: every registered signing key that is not revoked (public halves). */
async function trustedKeysOf(sequelize: Sequelize): Promise<SigningPublicKey[]> {
  const rows = await sequelize.query<{ public_key_pem: string }>("SELECT public_key_pem FROM signing_keys WHERE state <> 'revoked'", { type: QueryTypes.SELECT });
  const keys: SigningPublicKey[] = [];
  for (const r of rows) {
    try {
      keys.push(parsePublicKeyPem(r.public_key_pem));
    } catch {
      // A key the firmware could not hold is simply not trusted.
    }
  }
  return keys;
}

/** What a logger enrolled from the shelf runs: the newest complete stable release of its model (as the fleet plan's factory firmware). */
async function factoryFirmware(sequelize: Sequelize): Promise<Map<string, { version: string; securityCounter: number }>> {
  const rows = await sequelize.query<{ model_id: string; version: string; security_counter: number }>(
    "SELECT model_id, version, security_counter FROM releases WHERE state = :complete AND channel = :stable",
    { type: QueryTypes.SELECT, replacements: SQL_WORDS },
  );
  const newest = new Map<string, { version: string; securityCounter: number }>();
  for (const r of rows) {
    const known = newest.get(r.model_id);
    if (semver.valid(r.version) && (!known || semver.gt(r.version, known.version))) newest.set(r.model_id, { version: r.version, securityCounter: r.security_counter });
  }
  return newest;
}

/** Each serial's parts in the full scenario, planned again from the time it was seeded; empty for any other seed. */
export async function partsBySerial(sequelize: Sequelize): Promise<Map<string, { board: string; roles: Role[] }>> {
  const [seeded] = await sequelize.query<{ at: Date }>(
    "SELECT at FROM activity WHERE action = 'demo.seeded' AND details->>'scenario' = 'full' ORDER BY at DESC LIMIT 1",
    { type: QueryTypes.SELECT },
  );
  const parts = new Map<string, { board: string; roles: Role[] }>();
  if (!seeded) return parts;
  for (const l of planFleet(new Date(seeded.at)).loggers) parts.set(l.serial, { board: l.board, roles: l.roles });
  return parts;
}

export type LiveDemoDeps = {
  sequelize: Sequelize;
  dataDir: string;
  /** The server's own origin on loopback, e.g. http://127.0.0.1:8080. */
  baseUrl: string;
  logger: pino.Logger;
  settings: LiveDemoSettings;
  /** Randomness (a fixed seed in tests); default: a fresh seed each start. */
  random?: Random;
  /** How often the roster is read again, in real milliseconds (default one minute). */
  rosterEveryMs?: number;
};

export type LiveDemo = {
  /** Loggers checking in now. */
  readonly loggers: number;
  readonly tally: FleetTally;
  /** Ends the loop, cancels requests in flight and waits for the loggers to stop. */
  stop(): Promise<void>;
};

const NEVER = new Date(8.64e15);

/** Share of a release's trip point the demo's own failures stay under. */
export const TRIP_MARGIN = 0.8;

export type ReleaseFailures = { installed: number; failed: number; tripFailureRatio: number; tripMinReports: number };

/**
 * The demo's failure rate for one more install of a release: the rate as set, unless one more failure
 * would take the release's failure ratio past TRIP_MARGIN of its trip point, counted the way the trip
 * counts it (failed ÷ finished, over at least tripMinReports finished installs) — then none. A rate set
 * at or above the trip point is not held back. An unknown release gets no failures until it is known.
 */
export function guardedFailRate(rate: number, release: ReleaseFailures | undefined, injectedSince = 0): number {
  if (!release) return 0;
  if (rate >= release.tripFailureRatio) return rate;
  const failed = release.failed + injectedSince + 1;
  const finished = release.installed + release.failed + injectedSince + 1;
  return failed / Math.max(finished, release.tripMinReports) <= TRIP_MARGIN * release.tripFailureRatio ? rate : 0;
}

/** Each live release's finished installs as the trip counts them (connection and low-supply failures are retried, not counted). */
async function releaseFailures(sequelize: Sequelize): Promise<Map<string, ReleaseFailures>> {
  const rows = await sequelize.query<ReleaseFailures & { id: string }>(
    `SELECT r.id, r.trip_failure_ratio::float8 AS "tripFailureRatio", r.trip_min_reports AS "tripMinReports",
            count(ir.release_id) FILTER (WHERE ir.state = :installed)::int AS installed,
            count(ir.release_id) FILTER (WHERE ir.state = :failed AND COALESCE(ir.reason, :otherReason) NOT IN (:transientReasons))::int AS failed
       FROM releases r LEFT JOIN install_reports ir ON ir.release_id = r.id
      WHERE r.state IN (:liveStates)
      GROUP BY r.id`,
    { type: QueryTypes.SELECT, replacements: SQL_WORDS },
  );
  return new Map(rows.map((r) => [r.id, r]));
}

/** Starts the living demo; resolves once the roster is read (a no-op demo when nothing can run). */
export async function startLiveDemo(deps: LiveDemoDeps): Promise<LiveDemo> {
  const { sequelize, logger: log, settings } = deps;
  const tally = new FleetTally();
  const secret = existingDemoSecret(deps.dataDir);
  if (!secret) {
    log.info('living demo: no demo logger tokens in this data folder (the database was not seeded by the demo here); nothing checks in');
    return { loggers: 0, tally, stop: async () => undefined };
  }
  const random = deps.random ?? seededRandom(randomInt(2 ** 32));
  const clock = acceleratedClock(new Date(), settings.speed);
  const abort = new AbortController();
  const sleep = (realMs: number) =>
    new Promise<void>((resolve) => {
      if (abort.signal.aborted) return resolve();
      const done = () => {
        clearTimeout(timer);
        abort.signal.removeEventListener('abort', done);
        resolve();
      };
      const timer = setTimeout(done, Math.max(1, realMs));
      abort.signal.addEventListener('abort', done);
    });
  // The same requests as a logger's; stopping cancels those in flight.
  const fetchLoopback: typeof fetch = (input, init) => globalThis.fetch(input, { ...init, signal: abort.signal });
  const trustedKeys: SigningPublicKey[] = [];
  // The failure budget: figures read every few seconds, and the failures the loggers reported since.
  let figures = new Map<string, ReleaseFailures>();
  let injected: { release: string; at: number }[] = [];
  const readFigures = async () => {
    const asked = Date.now();
    figures = await releaseFailures(sequelize);
    injected = injected.filter((f) => f.at >= asked);
  };
  const failRateFor = (rate: number) => (offer: Offer) =>
    guardedFailRate(rate, figures.get(offer.release), injected.filter((f) => f.release === offer.release).length);
  const onEvent = (event: LoggerEvent) => {
    tally.onEvent(event);
    if (event.kind === 'report' && event.delivered && event.report.state === 'failed' && ['integrity', 'storage', 'other'].includes(event.report.reason ?? 'other')) {
      injected.push({ release: event.report.release, at: Date.now() });
    }
    if (event.kind === 'report' && event.delivered && (event.report.state === 'installed' || event.report.state === 'failed')) {
      log.debug(`living demo: ${event.serial} reports ${event.report.state}${event.report.reason ? ` (${event.report.reason})` : ''}`);
    } else if (event.kind === 'error' && !abort.signal.aborted) {
      log.debug(`living demo: ${event.message}`);
    }
  };

  const parts = await partsBySerial(sequelize);
  const loggers: DemoLogger[] = [];
  let silent = 0;

  let intervalS = 0;
  const sync = async () => {
    const [rows, keys, factory] = await Promise.all([roster(sequelize), trustedKeysOf(sequelize), factoryFirmware(sequelize)]);
    trustedKeys.splice(0, trustedKeys.length, ...keys);
    const now = clock();
    const wanted = new Map<string, RosterRow>();
    silent = 0;
    for (const row of rows) {
      intervalS = row.interval_s;
      const token = demoLoggerToken(secret, row.serial);
      if (createHash('sha256').update(token).digest('hex') !== row.token_digest) continue; // not a demo token (any more)
      const part = parts.get(row.serial);
      const roles = part && part.board === row.board ? part.roles : [];
      if (!behaviourOf(roles, row.board, settings).runs) {
        silent += 1;
        continue;
      }
      wanted.set(row.id, row);
    }
    // Loggers retired, moved off the demo token or gone: they stop checking in.
    for (let i = loggers.length - 1; i >= 0; i--) if (!wanted.has(loggers[i].loggerId)) loggers.splice(i, 1);
    const have = new Set(loggers.map((l) => l.loggerId));
    for (const row of wanted.values()) {
      if (have.has(row.id)) continue;
      const part = parts.get(row.serial);
      const behaviour = behaviourOf(part && part.board === row.board ? part.roles : [], row.board, settings);
      const own = forkRandom(random);
      const bench = factory.get(row.model_id);
      const firmware = row.firmware && semver.valid(row.firmware) ? row.firmware : (bench?.version ?? '1.0.0');
      const l = new DemoLogger(
        row.id,
        {
          serial: row.serial,
          token: demoLoggerToken(secret, row.serial),
          board: row.board,
          firmware,
          securityCounter: row.firmware ? row.security_counter : (bench?.securityCounter ?? 0),
          modelId: row.model_id,
          spot: row.latitude !== null && row.longitude !== null ? { latitude: row.latitude, longitude: row.longitude } : undefined,
          panel: typicalPanel(row.panel_wp && row.panel_wp > 0 ? row.panel_wp : 100),
          supply: behaviour.supply,
        },
        {
          baseUrl: deps.baseUrl,
          fetch: fetchLoopback,
          clock,
          random: own,
          trustedKeys,
          // Bad flash fails whatever the budget says: that is the scenario's hardware, not the demo's dice.
          failRate: behaviour.failRate >= 1 ? 1 : failRateFor(behaviour.failRate),
          interruptRate: behaviour.interruptRate,
          onEvent,
        },
        behaviour.probeStuckC,
      );
      // Its timer runs on from its last check-in; one that is overdue (the server was off, or it was
      // just enrolled) checks in somewhere within its first interval, so the fleet does not arrive at once.
      const intervalMs = row.interval_s * 1000;
      const due = row.last_seen_at ? new Date(row.last_seen_at).getTime() + intervalMs * (0.9 + 0.2 * own()) : 0;
      l.nextCheckInAt = new Date(due > now.getTime() ? due : now.getTime() + own() * intervalMs);
      loggers.push(l);
    }
  };

  await Promise.all([sync(), readFigures()]);
  log.info(
    `living demo: ${loggers.length} loggers check in every ${Math.round(intervalS / 60)} min` +
      `${silent ? ` (${silent} stay silent, as the scenario has it)` : ''}${settings.speed !== 1 ? `, clock at ${settings.speed}× real time` : ''}` +
      '; HELIODOR_DEMO_LIVE=0 turns it off',
  );

  let stopped = false;
  let syncing = Promise.resolve();
  let inSync = false;
  const resync = setInterval(() => {
    if (inSync || stopped) return;
    inSync = true;
    syncing = sync()
      .catch((err: unknown) => log.warn({ err }, 'living demo: the roster could not be read; trying again in a minute'))
      .finally(() => {
        inSync = false;
      });
  }, deps.rosterEveryMs ?? 60_000);
  resync.unref?.();
  let figuring = Promise.resolve();
  const refigure = setInterval(() => {
    if (stopped) return;
    figuring = readFigures().catch((err: unknown) => log.debug({ err }, 'living demo: release figures not read; trying again shortly'));
  }, 5_000);
  refigure.unref?.();

  const running = runFleet(loggers, {
    clock,
    until: NEVER,
    concurrency: 8,
    tally,
    waitUntil: (at) => sleep(Math.min(1000, (at.getTime() - clock().getTime()) / settings.speed)),
    pause: () => sleep(100),
    onStep: () => stopped,
  }).catch((err: unknown) => log.error({ err }, 'living demo stopped by an error'));

  return {
    get loggers() {
      return loggers.length;
    },
    tally,
    async stop() {
      if (!stopped) {
        stopped = true;
        clearInterval(resync);
        clearInterval(refigure);
        abort.abort();
      }
      await Promise.all([running, syncing, figuring]);
    },
  };
}
