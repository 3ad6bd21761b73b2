// A fleet of virtual loggers: where their tokens come from (a bench sheet, or registration and
// enrollment through the console API), the keys their firmware trusts, the tally of what happened,
// and the scheduler that lets each logger check in when its timer runs out.
import fs from 'node:fs';
import path from 'node:path';
import { parse } from 'csv-parse/sync';
import semver from 'semver';
import { parsePublicKeyPem, type SigningPublicKey } from '../../server/images/manifest';
import { VirtualLogger, type InstallOutcome, type LoggerEnvironment, type LoggerEvent, type LoggerIdentity } from './logger';
import { forkRandom, pick, type Random } from './random';
import { typicalPanel, type Spot } from './readings';

// ---- Identities ----

/** A problem setting the fleet up (bench sheet, console sign-in, registration): reported in one line. */
export class SetupError extends Error {}

export type BenchRow = { serial: string; token: string; model: string; board: string };

const TOKEN = /^hlt_[A-Za-z0-9_-]{43}$/;

/** Reads a bench sheet (CSV with header serial,token,model,board, as the console and the demo seed write it). */
export function readBenchSheet(text: string): BenchRow[] {
  const records = parse(text, { columns: (header: string[]) => header.map((h) => h.trim().toLowerCase()), skip_empty_lines: true, trim: true, bom: true }) as Record<string, string>[];
  const rows: BenchRow[] = [];
  for (const [i, r] of records.entries()) {
    const line = i + 2;
    if (!r.serial || !r.token || !r.board) throw new SetupError(`bench sheet line ${line}: needs serial, token and board`);
    if (!TOKEN.test(r.token)) throw new SetupError(`bench sheet line ${line}: the token is not a logger token (hlt_ and 43 characters)`);
    rows.push({ serial: r.serial, token: r.token, model: r.model ?? '', board: r.board });
  }
  return rows;
}

/** Versions the loggers run when the simulation starts, per board ("A=2.1.4,B=2.2.0,C=2.2.0" or one version for all). */
export function firmwareByBoard(spec: string): (board: string) => string {
  const parts = spec.split(',').map((p) => p.trim()).filter(Boolean);
  const map = new Map<string, string>();
  let fallback: string | null = null;
  for (const p of parts) {
    const [board, version] = p.includes('=') ? p.split('=').map((s) => s.trim()) : [null, p];
    if (!semver.valid(version) || semver.clean(version) !== version) throw new SetupError(`--firmware: "${version}" is not a semantic version such as 2.2.0`);
    if (board) map.set(board, version);
    else fallback = version;
  }
  return (board) => map.get(board) ?? fallback ?? map.values().next().value ?? '1.0.0';
}

/** Aldmere Vale (PRODUCT.md), the invented farmland the demo loggers sit in: about 52.11–52.18° N, 1.94–2.03° W. */
export function valeSpot(random: Random): Spot {
  return { latitude: 52.11 + 0.07 * random(), longitude: -2.03 + 0.09 * random() };
}

// ---- The console API, for registering and enrolling loggers ----


/** A signed-in console session (cookie), speaking the console's JSON API. */
export class ConsoleSession {
  private cookie = '';
  constructor(
    readonly baseUrl: string,
    private readonly fetchFn: typeof fetch = globalThis.fetch.bind(globalThis),
  ) {}

  async signIn(email: string, password: string): Promise<void> {
    const res = await this.fetchFn(new URL('/api/auth/sign-in', this.baseUrl), {
      method: 'POST',
      headers: { 'Content-Type': 'application/json', 'X-Requested-With': 'heliodor' },
      body: JSON.stringify({ email, password }),
      redirect: 'error',
    });
    if (res.status !== 200) throw new SetupError(`sign-in as ${email} failed: ${await problemText(res)}`);
    this.cookie = res.headers
      .getSetCookie()
      .map((c) => c.split(';')[0])
      .join('; ');
  }

  async request<T>(method: string, pathname: string, body?: unknown | FormData): Promise<T> {
    const headers: Record<string, string> = { 'X-Requested-With': 'heliodor', Accept: 'application/json' };
    if (this.cookie) headers.Cookie = this.cookie;
    let payload: BodyInit | undefined;
    if (body instanceof FormData) payload = body;
    else if (body !== undefined) {
      headers['Content-Type'] = 'application/json';
      payload = JSON.stringify(body);
    }
    const res = await this.fetchFn(new URL(pathname, this.baseUrl), { method, headers, body: payload, redirect: 'error' });
    if (res.status < 200 || res.status > 299) throw new SetupError(`${method} ${pathname} failed: ${await problemText(res)}`);
    return (res.status === 204 ? null : await res.json()) as T;
  }
}

async function problemText(res: Response): Promise<string> {
  try {
    const p = (await res.json()) as { title?: string; detail?: string; errors?: { path: string; message: string; line?: number }[] };
    const errors = (p.errors ?? []).slice(0, 3).map((e) => `${e.line ? `line ${e.line} ` : ''}${e.path} ${e.message}`).join('; ');
    return `${res.status} ${p.title ?? ''}${p.detail ? `: ${p.detail}` : ''}${errors ? ` (${errors})` : ''}`;
  } catch {
    return String(res.status);
  }
}

type ModelView = { id: string; name: string; boards: { label: string }[] };
type SiteView = { id: string; name: string; latitude: number | null; longitude: number | null };
type BatchAnswer = { rows: { id: string; serial: string; token: string; board: string; channel: string }[] };

export type RegisteredLogger = LoggerIdentity & { id: string; channel: 'stable' | 'early'; siteId: string };

export type RegistrationOptions = {
  count: number;
  /** Model by name or id (default: the only model, or "FL-2 field logger"). */
  model?: string;
  /** Sites to enroll at, by id (default: every site the session can see), round-robin. */
  siteIds?: string[];
  /** Boards to register, in turn (default: every board of the model). */
  boards?: string[];
  /** Share of loggers on the early channel (0–1). */
  earlyShare?: number;
  firmware: (board: string) => string;
  securityCounter?: number;
  random: Random;
  /** Serial prefix; serials are <prefix>-<n>. */
  serialPrefix: string;
  /** Enrollments sent at once (default 8). */
  concurrency?: number;
};

/** Runs `work` for every item, at most `limit` at a time; the first failure stops the rest and is thrown. */
export async function inParallel<T>(items: readonly T[], limit: number, work: (item: T) => Promise<unknown>): Promise<void> {
  let next = 0;
  let failed: unknown = null;
  const worker = async () => {
    while (failed === null && next < items.length) {
      const item = items[next++];
      try {
        await work(item);
      } catch (error) {
        failed ??= error;
      }
    }
  };
  await Promise.all(Array.from({ length: Math.max(1, Math.min(limit, items.length)) }, worker));
  if (failed !== null) throw failed;
}

/**
 * Registers loggers as a batch (POST /api/loggers/batch) and enrolls each at a site
 * (POST /api/enrollments), as an admin would with the bench sheet and an installer with the label.
 */
export async function registerFleet(session: ConsoleSession, options: RegistrationOptions): Promise<RegisteredLogger[]> {
  const models = (await session.request<{ rows: ModelView[] }>('GET', '/api/models')).rows;
  const model =
    models.find((m) => m.id === options.model || m.name === options.model) ??
    (options.model ? undefined : models.length === 1 ? models[0] : models.find((m) => m.name === 'FL-2 field logger'));
  if (!model) throw new SetupError(options.model ? `no model named ${options.model}` : 'name the model to register loggers of (--model)');
  const allSites = (await session.request<{ rows: SiteView[] }>('GET', '/api/sites')).rows;
  const sites = options.siteIds ? options.siteIds.map((id) => allSites.find((s) => s.id === id) ?? ({ id, name: id, latitude: null, longitude: null } as SiteView)) : allSites;
  if (sites.length === 0) throw new SetupError('there is no site to enroll the loggers at; create one first');
  const boards = options.boards ?? model.boards.map((b) => b.label);

  const planned = Array.from({ length: options.count }, (_, i) => ({
    serial: `${options.serialPrefix}-${String(i + 1).padStart(5, '0')}`,
    board: boards[i % boards.length],
    channel: options.random() < (options.earlyShare ?? 0) ? ('early' as const) : ('stable' as const),
  }));
  const registered: BatchAnswer['rows'] = [];
  for (let at = 0; at < planned.length; at += 5000) {
    const part = planned.slice(at, at + 5000);
    const csv = ['serial,model,board,channel', ...part.map((p) => `${p.serial},${model.id},${p.board},${p.channel}`)].join('\n') + '\n';
    const form = new FormData();
    form.append('file', new Blob([csv], { type: 'text/csv' }), 'simulated-loggers.csv');
    registered.push(...(await session.request<BatchAnswer>('POST', '/api/loggers/batch', form)).rows);
  }

  // Panels are chosen in order (the same seed gives the same fleet); enrollments then go a few at a time.
  const fleet: RegisteredLogger[] = registered.map((row, i) => {
    const site = sites[i % sites.length];
    const panel = typicalPanel(pick(options.random, [20, 50, 100]));
    const spot = site.latitude !== null && site.longitude !== null ? { latitude: site.latitude, longitude: site.longitude } : valeSpot(options.random);
    return {
      id: row.id,
      serial: row.serial,
      token: row.token,
      board: row.board,
      channel: row.channel === 'early' ? 'early' : 'stable',
      siteId: site.id,
      modelId: model.id,
      firmware: options.firmware(row.board),
      securityCounter: options.securityCounter ?? 0,
      spot,
      panel,
    };
  });
  await inParallel(fleet, options.concurrency ?? 8, (logger) =>
    session.request('POST', '/api/enrollments', {
      token: logger.token,
      siteId: logger.siteId,
      panelWp: logger.panel!.wattsPeak,
      panelVocV: logger.panel!.vocV,
      // 10 mΩ and 8 A: 80 mV at full current, inside the power monitor's 81.92 mV shunt range.
      shuntOhm: 0.01,
      maxCurrentA: 8,
      tempResolutionBits: 12,
      notes: 'Simulated logger (npm run simulate)',
    }),
  );
  return fleet;
}

/** Where a release in rollout is offered: what registering loggers for its pilot needs to know. */
export type PilotTarget = { releaseId: string; version: string; modelId: string; channel: 'stable' | 'early'; siteIds: string[]; boards: string[] };

type ReleaseListRow = { id: string; modelId: string; modelName: string; version: string; state: string };
type ReleaseView = ReleaseListRow & { channel: 'stable' | 'early'; boards: string[]; upgradeFrom: string | null; pilotSiteIds: string[] };

/**
 * The pilot of a release by version (GET /api/releases, then the release): its model, channel, pilot
 * sites and board revisions, so loggers registered there are offered it (DEVICE_API.md rules 2–3).
 * `firmware` must be older than the release and inside its upgrade-from range, or nothing would be offered.
 */
export async function pilotTarget(session: ConsoleSession, version: string, firmware: (board: string) => string, model?: string): Promise<PilotTarget> {
  const rows = (await session.request<{ rows: ReleaseListRow[] }>('GET', '/api/releases')).rows;
  const matches = rows.filter((r) => r.version === version && (!model || r.modelId === model || r.modelName === model));
  if (matches.length === 0) throw new SetupError(`no release ${version}${model ? ` of ${model}` : ''}`);
  if (matches.length > 1) throw new SetupError(`release ${version} exists for several models: name one with --model`);
  const release = await session.request<ReleaseView>('GET', `/api/releases/${matches[0].id}`);
  if (!['pilot', 'widening'].includes(release.state)) throw new SetupError(`release ${version} is ${release.state}: --pilot-of needs a release in pilot or widening`);
  if (release.pilotSiteIds.length === 0) throw new SetupError(`release ${version} has no pilot sites`);
  for (const board of release.boards) {
    const running = firmware(board);
    const admitted = !release.upgradeFrom || semver.satisfies(running, release.upgradeFrom, { includePrerelease: true });
    if (!semver.lt(running, release.version) || !admitted) {
      throw new SetupError(`board ${board} would run ${running}, which ${release.version} does not upgrade (upgrade-from ${release.upgradeFrom ?? 'any'}): pass --firmware`);
    }
  }
  return { releaseId: release.id, version: release.version, modelId: release.modelId, channel: release.channel, siteIds: release.pilotSiteIds, boards: release.boards };
}

/** The version each logger runs by the console's records (GET /api/loggers, page by page), by serial. */
export async function firmwareOnRecord(session: ConsoleSession): Promise<Map<string, string>> {
  const versions = new Map<string, string>();
  for (let page = 1; page <= 1000; page++) {
    const list = await session.request<{ rows: { serial: string; firmware: string | null }[]; total: number }>('GET', `/api/loggers?page=${page}&pageSize=100`);
    for (const row of list.rows) if (row.firmware && semver.valid(row.firmware) === row.firmware) versions.set(row.serial, row.firmware);
    if (list.rows.length < 100 || page * 100 >= list.total) break;
  }
  return versions;
}

// ---- Trusted keys ----

/**
 * The public keys the simulated firmware trusts: every public-key PEM in a folder (as `heliodor keys new`
 * writes them). Private keys are skipped unread beyond their label: the simulator never needs one.
 */
export function loadTrustedKeys(dir: string): SigningPublicKey[] {
  const keys: SigningPublicKey[] = [];
  for (const name of fs.readdirSync(dir).sort()) {
    if (!name.endsWith('.pem')) continue;
    const text = fs.readFileSync(path.join(dir, name), 'utf8');
    if (text.includes('PRIVATE KEY')) continue;
    keys.push(parsePublicKeyPem(text));
  }
  return keys;
}

// ---- The tally ----

export type FleetCounts = {
  checkIns: number;
  offers: number;
  installs: number;
  failures: number;
  failuresByReason: Record<string, number>;
  errors: number;
  backoffs: number;
  interruptions: number;
  resets: Record<string, number>;
  /** Loggers whose measurements drift on the version they installed (--drift), by version. */
  drifted: Record<string, number>;
};

/** Counts what the fleet did, from the loggers' events and install outcomes. */
export class FleetTally {
  readonly counts: FleetCounts = { checkIns: 0, offers: 0, installs: 0, failures: 0, failuresByReason: {}, errors: 0, backoffs: 0, interruptions: 0, resets: {}, drifted: {} };
  readonly errorSamples: string[] = [];

  onEvent = (event: LoggerEvent): void => {
    const c = this.counts;
    switch (event.kind) {
      case 'check-in':
        c.checkIns += 1;
        break;
      case 'backoff':
        c.backoffs += 1;
        break;
      case 'interrupted':
        c.interruptions += 1;
        break;
      case 'rebooted':
        c.resets[event.reason] = (c.resets[event.reason] ?? 0) + 1;
        break;
      case 'drifted':
        c.drifted[event.firmware] = (c.drifted[event.firmware] ?? 0) + 1;
        break;
      case 'error':
        c.errors += 1;
        if (this.errorSamples.length < 10) this.errorSamples.push(event.message);
        break;
      default:
        break;
    }
  };

  onInstall(outcome: InstallOutcome): void {
    const c = this.counts;
    c.offers += 1;
    if (outcome.state === 'installed') c.installs += 1;
    else {
      c.failures += 1;
      const reason = outcome.reason ?? 'other';
      c.failuresByReason[reason] = (c.failuresByReason[reason] ?? 0) + 1;
    }
  }

  line(): string {
    const c = this.counts;
    return `check-ins ${c.checkIns} · offers ${c.offers} · installs ${c.installs} · failures ${c.failures} · errors ${c.errors}`;
  }
}

// ---- Building and running ----

export type FleetEnvironment = Omit<LoggerEnvironment, 'random' | 'onEvent'> & {
  random: Random;
  /** First check-ins spread evenly over this many seconds, so the fleet does not arrive at once. */
  spreadS?: number;
};

/** Virtual loggers for the identities, each with a random stream of its own. */
export function buildFleet(identities: readonly LoggerIdentity[], env: FleetEnvironment, tally?: FleetTally): VirtualLogger[] {
  const start = env.clock();
  return identities.map((identity) => {
    const random = forkRandom(env.random);
    const logger = new VirtualLogger(
      { ...identity, spot: identity.spot ?? valeSpot(random) },
      { ...env, random, onEvent: tally?.onEvent },
    );
    logger.nextCheckInAt = new Date(start.getTime() + Math.floor(random() * (env.spreadS ?? 0) * 1000));
    return logger;
  });
}

/** Simulated time running `speed` times faster than the wall clock from `start`. */
export function acceleratedClock(start: Date, speed: number, wall: () => number = Date.now): () => Date {
  const wallStart = wall();
  return () => new Date(start.getTime() + (wall() - wallStart) * speed);
}

export type RunOptions = {
  clock: () => Date;
  /** The run ends when simulated time reaches this (in-flight installs are finished first). */
  until: Date;
  /** Requests (one logger's cycle each) at once. */
  concurrency: number;
  /** With no logger busy: waits until simulated time `at` (or less: the loop looks again after it returns). */
  waitUntil: (at: Date) => Promise<void>;
  /** With loggers busy: a short pause after which the loop looks again (default: until one of them is done). */
  pause?: () => Promise<void>;
  tally?: FleetTally;
  /** Called between steps; return true to stop early. */
  onStep?: () => boolean | void;
};

/**
 * Lets each logger check in (and install what it is offered) when its timer runs out, with at most
 * `concurrency` loggers busy at once, until the simulated end time.
 */
export async function runFleet(loggers: readonly VirtualLogger[], options: RunOptions): Promise<void> {
  const busy = new Map<VirtualLogger, Promise<void>>();
  const start = (logger: VirtualLogger, now: Date) => {
    const work = logger
      .cycle(now)
      .then((outcome) => {
        if (outcome) options.tally?.onInstall(outcome);
      })
      .catch((error: unknown) => {
        options.tally?.onEvent({ kind: 'error', serial: logger.serial, message: `${logger.serial}: ${(error as Error).message}` });
      })
      .finally(() => busy.delete(logger));
    busy.set(logger, work);
  };
  for (;;) {
    if (options.onStep?.()) break;
    const now = options.clock();
    if (now.getTime() >= options.until.getTime()) break;
    for (const logger of loggers) {
      if (busy.size >= options.concurrency) break;
      if (!busy.has(logger) && logger.due(now)) start(logger, now);
    }
    if (busy.size > 0) {
      // Look again as soon as any logger is done, or after the pause (newly due loggers, progress).
      await Promise.race(options.pause ? [...busy.values(), options.pause()] : [...busy.values()]);
      continue;
    }
    let next = options.until.getTime();
    for (const logger of loggers) if (!logger.refused) next = Math.min(next, logger.nextCheckInAt.getTime());
    await options.waitUntil(new Date(Math.max(next, now.getTime())));
  }
  await Promise.all(busy.values());
}
