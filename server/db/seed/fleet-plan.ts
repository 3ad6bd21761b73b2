// The full demo fleet as a plan: sites, loggers, releases with their history, and where every logger
// stands with every release. Computed in memory (no I/O), then written by full-scenario.ts.
//
// The plan follows the device API's own rules, so what the seed says happened is what the offer
// decision would have let happen:
// - a logger becomes eligible for a release at its pilot start (pilot sites), at the first widening
//   whose share covers its bucket (cohort.ts: SHA-256 of logger:release), or at completion;
// - it installs releases one hop at a time, in version order, each admitted by the release's
//   upgrade-from range; releases with the daylight window on install only inside the site's window;
// - a stopped release offers nothing after its stop.
// A few loggers play a part in the story (low supply, a failed install, a stepping stone …): their
// ids are drawn until their bucket puts them where the story needs them.
import { randomUUID } from 'node:crypto';
import semver from 'semver';
import { bucketOf, inShare } from '../../rollout/cohort';
import { daylightWindowAt } from '../../rollout/daylight';
import { transition, type ReleaseAction, type ReleaseLifecycle, type ReleaseState, type ResumeState } from '../../rollout/lifecycle';
import { forkRandom, seededRandom, type Random } from '../../../scripts/simulator/random';
import { integratorOf, valeSites, valeVillages, type ValeSite } from './scenario';

export const MINUTE = 60_000;
export const HOUR = 3_600_000;
export const DAY = 86_400_000;

type Channel = 'stable' | 'early';
type Person = 'Morgan' | 'Priya' | 'Tomasz' | 'Ade' | 'Lena' | 'system';

// ─── Releases ───────────────────────────────────────────────────────────────

type StepSpec = { action: ReleaseAction | 'upload'; at: Date; share?: number; reason?: string; actor: Person };

export type PlannedRelease = {
  id: string;
  version: string;
  channel: Channel;
  boards: string[];
  upgradeFrom: string | null;
  securityCounter: number;
  daylightWindow: boolean;
  notes: string;
  pilotSites: number[];
  steps: (StepSpec & { fromState: ReleaseState | null; toState: ReleaseState; shareAfter: number })[];
  state: ReleaseState;
  share: number;
  resumeState: ResumeState | null;
  uploadedAt: Date;
  pilotedAt: Date | null;
  widenedAt: Date | null;
  completedAt: Date | null;
  stoppedAt: Date | null;
  /** Who stopped it, while it stays stopped: a person, or the trip rule (the system). */
  stoppedBy: 'person' | 'trip' | null;
};

/** A time on the given number of days before `now`, at hh:mm UTC (office hours in the Vale). */
export function daysAgoAt(now: Date, days: number, hh: number, mm: number): Date {
  const day = Math.floor((now.getTime() - days * DAY) / DAY) * DAY;
  return new Date(day + hh * HOUR + mm * MINUTE);
}

/** The Vale's centre, for times that concern the whole Vale (when Priya widened 2.3.0). */
const VALE_CENTRE = { latitude: 52.12, longitude: -1.98 };

/** When the daylight window at a spot last closed before `at`. */
function lastWindowClose(at: Date, spot: { latitude: number; longitude: number }): Date {
  for (const back of [0, 1, 2]) {
    const w = daylightWindowAt(new Date(at.getTime() - back * DAY), spot.latitude, spot.longitude);
    if (w.kind === 'window' && w.closes.getTime() < at.getTime()) return w.closes;
  }
  return new Date(at.getTime() - 8 * HOUR);
}

/** The first instant at or after `at` inside the site's daylight window. */
function nextInWindow(at: Date, spot: { latitude: number; longitude: number }): Date {
  for (const ahead of [0, 1, 2]) {
    const probe = new Date(at.getTime() + ahead * DAY);
    const w = daylightWindowAt(probe, spot.latitude, spot.longitude);
    if (w.kind !== 'window') return at;
    if (at.getTime() <= w.closes.getTime() && w.opens.getTime() <= w.closes.getTime()) {
      return at.getTime() >= w.opens.getTime() ? at : w.opens;
    }
  }
  return at;
}

function buildRelease(spec: Omit<PlannedRelease, 'id' | 'steps' | 'state' | 'share' | 'resumeState' | 'uploadedAt' | 'pilotedAt' | 'widenedAt' | 'completedAt' | 'stoppedAt' | 'stoppedBy'>, steps: StepSpec[]): PlannedRelease {
  let life: ReleaseLifecycle = { state: 'draft', share: 0, resumeState: null };
  const done: PlannedRelease['steps'] = [];
  const first: Partial<Record<ReleaseState, Date>> = {};
  for (const step of steps) {
    if (step.action === 'upload') {
      done.push({ ...step, fromState: null, toState: 'draft', shareAfter: 0 });
      continue;
    }
    const next = transition(life, step.action, { share: step.share, reason: step.reason });
    if (!next.ok) throw new Error(`demo release ${spec.version}: ${next.detail}`);
    done.push({ ...step, fromState: life.state, toState: next.release.state, shareAfter: next.release.share });
    if (!first[next.release.state]) first[next.release.state] = step.at;
    life = next.release;
  }
  return {
    ...spec,
    id: randomUUID(),
    steps: done,
    state: life.state,
    share: life.share,
    resumeState: life.resumeState,
    uploadedAt: steps[0].at,
    pilotedAt: first.pilot ?? null,
    widenedAt: first.widening ?? null,
    completedAt: first.complete ?? null,
    stoppedAt: first.stopped ?? null,
    stoppedBy: life.state === 'stopped' ? (done.findLast((d) => d.action === 'stop')?.actor === 'system' ? 'trip' : 'person') : null,
  };
}

/** Site indices (positions in valeSites) that the story refers to. */
export const SITE = {
  aldmereHall: 0,
  brackenfordPumps: 1,
  aldmereSchool: 2,
  hollinsDairy: 3,
  westbyHut3: 4,
  boatClub: 5,
  brackenfordHall: 6,
  tarnwickPumps1: 7,
  corvenhamDairy: 8,
  westbyChapel: 9,
  tarnwickPumps2: 14,
  sedgeburyPumps: 16,
  aldmereSurgery: 17,
  fernhollowDepot: 20,
  dunnockBowls: 24,
  glasshouses: 29,
  fireStation: 30,
  tarnwickDairy: 33,
  pellowHut4: 35,
  aldmereSports: 37,
  sedgeburyDairy: 39,
  corvenhamHall: 40,
  hobblefordPumps: 42,
  tarnwickHut6: 44,
  pellowHall: 46,
} as const;

/** Sites on the early channel (3.0 pre-releases): the co-op's own depot and three volunteers. */
export const EARLY_SITES: readonly number[] = [SITE.fernhollowDepot, SITE.glasshouses, SITE.aldmereSports, SITE.pellowHall];
/** Early-channel loggers followed the stable channel until the sites volunteered. */
const EARLY_SWITCH_DAYS = 25;

export function planReleases(now: Date, widenedAt: Date) {
  const at = (days: number, hh: number, mm: number) => daysAgoAt(now, days, hh, mm);
  const r203 = buildRelease(
    {
      version: '2.0.3', channel: 'stable', boards: ['A', 'B', 'C'], upgradeFrom: null, securityCounter: 3, daylightWindow: false,
      notes: 'Fixes the energy counter wrapping after 4 GWh-equivalent pulses; steadier Wi-Fi reconnects.', pilotSites: [SITE.aldmereHall, SITE.aldmereSchool],
    },
    [
      { action: 'upload', at: at(124, 9, 40), actor: 'Priya' },
      { action: 'start_pilot', at: at(122, 10, 5), actor: 'Priya' },
      { action: 'widen', at: at(116, 10, 30), share: 30, actor: 'Priya' },
      { action: 'complete', at: at(110, 11, 0), actor: 'Priya' },
    ],
  );
  const r214 = buildRelease(
    {
      version: '2.1.4', channel: 'stable', boards: ['A', 'B', 'C'], upgradeFrom: null, securityCounter: 4, daylightWindow: false,
      notes: 'Moves the settings store to the new flash layout. Later releases expect it: loggers on 2.0.x step through 2.1.4.',
      pilotSites: [SITE.brackenfordPumps, SITE.brackenfordHall],
    },
    [
      { action: 'upload', at: at(80, 9, 15), actor: 'Priya' },
      { action: 'start_pilot', at: at(78, 10, 0), actor: 'Priya' },
      { action: 'widen', at: at(73, 10, 20), share: 25, actor: 'Priya' },
      { action: 'widen', at: at(69, 9, 50), share: 60, actor: 'Priya' },
      { action: 'complete', at: at(65, 10, 10), actor: 'Priya' },
    ],
  );
  const r220 = buildRelease(
    {
      version: '2.2.0', channel: 'stable', boards: ['A', 'B', 'C'], upgradeFrom: '>=2.1.0', securityCounter: 4, daylightWindow: false,
      notes: 'Probe readings at the profile\'s resolution; check-ins carry reset counts by reason.', pilotSites: [SITE.hollinsDairy, SITE.tarnwickPumps2],
    },
    [
      { action: 'upload', at: at(42, 14, 5), actor: 'Priya' },
      { action: 'start_pilot', at: at(40, 9, 30), actor: 'Priya' },
      { action: 'widen', at: at(36, 10, 0), share: 20, actor: 'Priya' },
      { action: 'widen', at: at(33, 10, 15), share: 50, actor: 'Priya' },
      { action: 'complete', at: at(29, 9, 45), actor: 'Priya' },
    ],
  );
  const r230 = buildRelease(
    {
      version: '2.3.0', channel: 'stable', boards: ['B', 'C'], upgradeFrom: '>=2.1.0', securityCounter: 5, daylightWindow: true,
      notes:
        'Faster sampling and the new radio power save; the radio stays quiet through supply dips.\n\n' +
        'Not for board A: its linear regulator browns out under the longer radio bursts (bench test), so board A stays on 2.2.0. ' +
        'Installs only in daylight: the bootloader is rewritten.',
      pilotSites: [SITE.aldmereSurgery, SITE.dunnockBowls, SITE.sedgeburyDairy],
    },
    [
      { action: 'upload', at: at(10, 15, 20), actor: 'Priya' },
      { action: 'start_pilot', at: at(8, 10, 30), actor: 'Priya' },
      { action: 'widen', at: at(5, 10, 40), share: 10, actor: 'Priya' },
      { action: 'widen', at: widenedAt, share: 25, actor: 'Priya' },
    ],
  );
  const beta1 = buildRelease(
    {
      version: '3.0.0-beta.1', channel: 'early', boards: ['B', 'C'], upgradeFrom: '>=2.2.0', securityCounter: 5, daylightWindow: false,
      notes: 'Firmware 3.0 preview: the new measurement scheduler and remote profile checks.', pilotSites: [SITE.fernhollowDepot, SITE.aldmereSports],
    },
    [
      { action: 'upload', at: at(23, 11, 0), actor: 'Priya' },
      { action: 'start_pilot', at: at(21, 10, 0), actor: 'Priya' },
      { action: 'widen', at: at(11, 10, 30), share: 20, actor: 'Priya' },
      {
        action: 'stop', at: at(6, 9, 20), actor: 'Priya',
        reason: 'Watchdog resets after Wi-Fi reconnects on board B at Corvenham Growers Glasshouses; 3.0.0-rc.1 carries the fix.',
      },
    ],
  );
  const rc1 = buildRelease(
    {
      version: '3.0.0-rc.1', channel: 'early', boards: ['B', 'C'], upgradeFrom: '>=2.2.0', securityCounter: 5, daylightWindow: false,
      notes: 'Release candidate: fixes the watchdog resets of beta.1 after Wi-Fi reconnects.', pilotSites: [SITE.fernhollowDepot, SITE.aldmereSports],
    },
    [
      { action: 'upload', at: at(4, 16, 10), actor: 'Priya' },
      { action: 'start_pilot', at: at(3, 10, 0), actor: 'Priya' },
    ],
  );
  return { r203, r214, r220, r230, beta1, rc1, all: [r203, r214, r220, r230, beta1, rc1] };
}

// ─── Loggers ────────────────────────────────────────────────────────────────

export type Role =
  | 'silent'
  | 'low_supply'
  | 'failed_storage'
  | 'failed_connection'
  | 'stepping_stone'
  | 'daylight'
  | 'outside_share'
  | 'stopped_behind'
  | 'on_beta'
  | 'unstable'
  | 'probe_fault'
  | 'profile_changed'
  | 'straggler'
  | 'rc_downloading'
  | 'retired';

export type PlannedReport = {
  releaseId: string;
  state: 'offered' | 'downloading' | 'downloaded' | 'installing' | 'installed' | 'failed';
  reason: string | null;
  detail: string | null;
  offeredAt: Date;
  updatedAt: Date;
  finishedAt: Date | null;
  confirmedAt: Date | null;
};

export type PlannedLogger = {
  id: string;
  serial: string;
  board: string;
  channel: Channel;
  status: 'registered' | 'enrolled' | 'retired';
  siteIndex: number | null;
  enrolledAt: Date | null;
  enrolledBy: Person | null;
  retiredAt: Date | null;
  retireReason: string | null;
  panelWp: number;
  roles: Role[];
  /** Version running now, and the install history (oldest first). */
  firmware: string | null;
  /** Version it came with from the bench. */
  factory: string | null;
  installs: { version: string; finishedAt: Date }[];
  reports: PlannedReport[];
  /** Last check-in (null: never checked in). */
  lastAt: Date | null;
  /** Supply at the board input: nominal volts and spread; a low spell from `lowSince`. */
  lowSupplySince: Date | null;
  profileChangedAt: Date | null;
};

export type PlannedSite = ValeSite & { index: number; latitude: number; longitude: number; integrator: 'Tomasz' | 'Ade'; channel: Channel; createdAt: Date; boardEra: 'A' | 'B' | 'C' };

export const FACTORY_BEFORE_RELEASES = '1.9.2';
export const COUNTER_OF: Record<string, number> = { '1.9.2': 2, '2.0.3': 3, '2.1.4': 4, '2.2.0': 4, '2.3.0': 5, '3.0.0-beta.1': 5, '3.0.0-rc.1': 5 };

export type FleetPlan = ReturnType<typeof planFleet>;

/** The whole full-size scenario at `now`. `random` drives panels, delays and coordinates (ids are random UUIDs). */
export function planFleet(now: Date, random: Random = seededRandom(20261201)) {
  const rnd = forkRandom(random);
  // Priya widened 2.3.0 to 25 % shortly after the daylight window last closed: the loggers it added
  // wait for tomorrow's window (at night the lagging screen says so).
  const lastClose = lastWindowClose(now, VALE_CENTRE);
  const widenedAt = new Date(Math.min(lastClose.getTime() + 25 * MINUTE, now.getTime() - 20 * MINUTE));
  const releases = planReleases(now, widenedAt);
  const { r230, beta1 } = releases;

  const sites: PlannedSite[] = valeSites.map((s, index) => {
    const village = valeVillages[s.village];
    const latitude = s.latitude ?? Number((village.latitude + (rnd() - 0.5) * 0.016).toFixed(6));
    const longitude = s.longitude ?? Number((village.longitude + (rnd() - 0.5) * 0.024).toFixed(6));
    const boardEra = index < 13 ? 'A' : index < 36 ? 'B' : 'C';
    return {
      ...s, index, latitude, longitude, integrator: integratorOf(village),
      channel: EARLY_SITES.includes(index) ? 'early' : 'stable',
      createdAt: daysAgoAt(now, 720 - index * 11, 9 + (index % 7), (index * 13) % 60),
      boardEra,
    };
  });

  // Which logger at which site plays which part (site index → position → roles).
  const parts = new Map<string, Role[]>([
    [`${SITE.brackenfordPumps}:0`, ['unstable']],
    [`${SITE.brackenfordPumps}:1`, ['unstable']],
    [`${SITE.tarnwickPumps1}:2`, ['straggler']],
    [`${SITE.corvenhamDairy}:3`, ['probe_fault']],
    [`${SITE.sedgeburyPumps}:0`, ['low_supply']],
    [`${SITE.fireStation}:1`, ['failed_storage']],
    [`${SITE.hobblefordPumps}:0`, ['failed_connection']],
    [`${SITE.tarnwickDairy}:2`, ['daylight']],
    [`${SITE.pellowHut4}:0`, ['outside_share']],
    [`${SITE.pellowHall}:0`, ['stopped_behind']],
    [`${SITE.glasshouses}:0`, ['on_beta']],
    [`${SITE.glasshouses}:1`, ['stopped_behind']],
    [`${SITE.aldmereSports}:1`, ['rc_downloading']],
    [`${SITE.corvenhamHall}:0`, ['profile_changed']],
    [`${SITE.tarnwickHut6}:0`, ['silent', 'outside_share']],
  ]);
  for (let k = 0; k < valeSites[SITE.westbyHut3].loggers; k++) parts.set(`${SITE.westbyHut3}:${k}`, ['silent']);

  /** Draws ids until the logger's buckets satisfy its part. */
  const idFor = (roles: Role[]): string => {
    for (let tries = 0; tries < 10_000; tries++) {
      const id = randomUUID();
      const b230 = bucketOf(id, r230.id);
      const bBeta = bucketOf(id, beta1.id);
      const ok = roles.every((role) => {
        switch (role) {
          case 'low_supply':
          case 'failed_storage':
          case 'failed_connection':
          case 'stepping_stone':
            return inShare(b230, 10);
          case 'daylight':
            return !inShare(b230, 10) && inShare(b230, 25);
          case 'outside_share':
            return !inShare(b230, 25);
          case 'silent':
            return !inShare(b230, 10);
          case 'stopped_behind':
            return !inShare(bBeta, 20);
          case 'on_beta':
            return inShare(bBeta, 20);
          default:
            return true;
        }
      });
      if (ok) return id;
    }
    throw new Error('no logger id fits the demo part');
  };

  const loggers: PlannedLogger[] = [];
  const panels = [80, 100, 150, 200];
  const enrolled: { site: PlannedSite; position: number; board: string; enrolledAt: Date; roles: Role[]; spare?: boolean }[] = [];
  for (const site of sites) {
    for (let k = 0; k < site.loggers; k++) {
      const roles = parts.get(`${site.index}:${k}`) ?? [];
      const spare = site.index === SITE.boatClub && k === site.loggers - 1;
      const enrolledAt = spare ? new Date(now.getTime() - 5 * HOUR - 12 * MINUTE) : new Date(site.createdAt.getTime() + (k * 37 + 20) * MINUTE);
      enrolled.push({ site, position: k, board: spare ? 'B' : site.boardEra, enrolledAt, roles: spare ? ['stepping_stone'] : roles, spare });
    }
  }
  // The boat club's original fourth logger, retired this morning after water got into its enclosure,
  // and one at Westby Chapel retired weeks ago after a lightning strike.
  const retiredSpecs = [
    { site: sites[SITE.boatClub], at: new Date(now.getTime() - 6 * HOUR - 40 * MINUTE), reason: 'Water in the enclosure after the lake flooded; replaced by a spare board B.' },
    { site: sites[SITE.westbyChapel], at: daysAgoAt(now, 40, 11, 5), reason: 'Lightning strike on the chapel roof array; the board is beyond repair.' },
  ];

  let serialNo = 2301;
  const nextSerial = () => `FL2-${String(serialNo++).padStart(5, '0')}`;
  type Entry = { e: (typeof enrolled)[number]; retired?: (typeof retiredSpecs)[number] };
  const entries: Entry[] = [
    ...enrolled.map((e) => ({ e })),
    ...retiredSpecs.map((r) => ({
      e: { site: r.site, position: -1, board: r.site.boardEra, enrolledAt: new Date(r.site.createdAt.getTime() + 90 * MINUTE), roles: [] as Role[] },
      retired: r,
    })),
  ].sort((a, b) => a.e.enrolledAt.getTime() - b.e.enrolledAt.getTime());

  const planOne = ({ e, retired }: Entry): PlannedLogger => {
    const roles: Role[] = retired ? ['retired'] : e.roles;
    const id = idFor(roles);
    const site = e.site;
    const lr = forkRandom(rnd);
    const lastAt = retired
      ? retired.at
      : roles.includes('silent')
        ? site.index === SITE.westbyHut3
          ? new Date(now.getTime() - (3 * DAY + 4 * HOUR + Math.floor(lr() * 20) * MINUTE))
          : new Date(now.getTime() - (2 * HOUR + 10 * MINUTE))
        : new Date(now.getTime() - Math.round((0.5 + lr() * 13.5) * MINUTE));
    const logger: PlannedLogger = {
      id,
      serial: nextSerial(),
      board: e.board,
      channel: site.channel,
      status: retired ? 'retired' : 'enrolled',
      siteIndex: site.index,
      enrolledAt: e.enrolledAt,
      enrolledBy: site.integrator,
      retiredAt: retired?.at ?? null,
      retireReason: retired?.reason ?? null,
      panelWp: panels[Math.floor(lr() * panels.length)],
      roles,
      firmware: null,
      factory: null,
      installs: [],
      reports: [],
      lastAt,
      lowSupplySince: roles.includes('low_supply') ? daysAgoAt(now, 6, 7, 10) : null,
      profileChangedAt: roles.includes('profile_changed') ? daysAgoAt(now, 1, 11, 25) : null,
    };
    runHistory(logger, lr, site, { now, releases, switchAt: new Date(now.getTime() - EARLY_SWITCH_DAYS * DAY) });
    return logger;
  };
  for (const entry of entries) loggers.push(planOne(entry));
  // On the shelf: registered, not yet enrolled anywhere.
  for (let k = 0; k < 6; k++) {
    loggers.push({
      id: randomUUID(), serial: nextSerial(), board: 'C', channel: 'stable', status: 'registered', siteIndex: null, enrolledAt: null, enrolledBy: null,
      retiredAt: null, retireReason: null, panelWp: 0, roles: [], firmware: null, factory: null, installs: [], reports: [], lastAt: null, lowSupplySince: null, profileChangedAt: null,
    });
  }
  return { now, widenedAt, releases, sites, loggers };
}

type HistoryContext = { now: Date; releases: ReturnType<typeof planReleases>; switchAt: Date };

/** When a logger first became eligible for a release (pilot site, share widening, completion), or null. */
function eligibleAt(logger: PlannedLogger, r: PlannedRelease): Date | null {
  if (!r.boards.includes(logger.board)) return null;
  const times: number[] = [];
  const pilot = r.steps.find((s) => s.action === 'start_pilot');
  if (pilot && logger.siteIndex !== null && r.pilotSites.includes(logger.siteIndex)) times.push(pilot.at.getTime());
  const bucket = bucketOf(logger.id, r.id);
  const widening = r.steps.find((s) => s.action === 'widen' && inShare(bucket, s.share!));
  if (widening) times.push(widening.at.getTime());
  const complete = r.steps.find((s) => s.action === 'complete');
  if (complete) times.push(complete.at.getTime());
  if (times.length === 0) return null;
  const first = Math.min(...times);
  const stop = r.steps.find((s) => s.action === 'stop');
  if (stop && first >= stop.at.getTime()) return null;
  return new Date(first);
}

/** Walks a logger through the releases, one hop at a time, recording its installs and reports. */
function runHistory(logger: PlannedLogger, random: Random, site: PlannedSite, ctx: HistoryContext) {
  const { now, releases } = ctx;
  const roles = logger.roles;
  const enrolledAt = logger.enrolledAt!;
  const horizon = logger.lastAt!.getTime();
  // Factory firmware: the newest complete stable release when the logger was enrolled.
  let running = FACTORY_BEFORE_RELEASES;
  for (const r of [releases.r203, releases.r214, releases.r220]) {
    if (r.completedAt && r.completedAt.getTime() < enrolledAt.getTime()) running = r.version;
  }
  if (roles.includes('stepping_stone')) running = '2.0.3'; // a spare from old stock
  logger.factory = running;
  let last = enrolledAt.getTime();
  const order = [...releases.all].sort((a, b) => semver.compare(a.version, b.version));
  for (const r of order) {
    if (!semver.gt(r.version, running)) continue;
    let from = eligibleAt(logger, r);
    if (!from) continue;
    // Channel: stable releases until an early site volunteered, early ones after.
    if (logger.channel === 'early') {
      if (r.channel === 'stable' && from.getTime() >= ctx.switchAt.getTime()) continue;
      if (r.channel === 'early' && from.getTime() < ctx.switchAt.getTime()) from = ctx.switchAt;
    } else if (r.channel !== 'stable') continue;
    if (r.upgradeFrom && !semver.satisfies(running, r.upgradeFrom, { includePrerelease: true })) break;
    if (r === releases.r214 && roles.includes('stepping_stone')) {
      // The spare needs the stepping stone first: offered at its first check-in, downloading over a weak link.
      logger.reports.push(report(r.id, 'downloading', new Date(enrolledAt.getTime() + 12 * MINUTE), new Date(horizon - 2 * MINUTE)));
      break;
    }
    let start = Math.max(from.getTime(), last) + Math.round((5 + random() * 25) * MINUTE);
    const spot = { latitude: site.latitude, longitude: site.longitude };
    if (r.daylightWindow) start = nextInWindow(new Date(start), spot).getTime() + Math.round(random() * 30 * MINUTE);
    const stop = r.steps.find((s) => s.action === 'stop');
    if (stop && start >= stop.at.getTime()) continue;
    const offeredAt = new Date(Math.max(from.getTime(), start - Math.round(random() * 10 * MINUTE)));

    // The parts the story needs.
    if (r === releases.r230 && roles.includes('low_supply')) break; // the supply guard holds it back
    if (r === releases.r230 && roles.includes('failed_storage')) {
      const failedAt = new Date(start + 41 * MINUTE);
      logger.reports.push({ ...report(r.id, 'failed', offeredAt, failedAt), reason: 'storage', detail: 'flash write verify failed at block 212', finishedAt: failedAt });
      break;
    }
    if (r === releases.r230 && roles.includes('failed_connection')) {
      const close = lastWindowClose(now, spot);
      const failedAt = new Date(Math.max(start + HOUR, close.getTime() - 35 * MINUTE));
      logger.reports.push({ ...report(r.id, 'failed', offeredAt, failedAt), reason: 'connection', detail: 'download stalled at 61 % (weak signal)', finishedAt: failedAt });
      break;
    }
    if (r === releases.r220 && roles.includes('straggler')) {
      const failedAt = new Date(start + 55 * MINUTE);
      logger.reports.push({ ...report(r.id, 'failed', offeredAt, failedAt), reason: 'storage', detail: 'image does not fit: flash has 3 bad blocks', finishedAt: failedAt });
      break;
    }
    if (r === releases.rc1 && roles.includes('rc_downloading')) {
      logger.reports.push(report(r.id, 'downloading', new Date(now.getTime() - 35 * MINUTE), new Date(horizon - MINUTE)));
      break;
    }

    const finished = start + Math.round((12 + random() * 40) * MINUTE);
    if (finished > horizon) break; // not yet: waiting for its window, or silent since
    const confirmed = finished + 15 * MINUTE <= horizon ? new Date(finished + 15 * MINUTE) : null;
    logger.reports.push({ ...report(r.id, 'installed', offeredAt, new Date(finished)), finishedAt: new Date(finished), confirmedAt: confirmed });
    logger.installs.push({ version: r.version, finishedAt: new Date(finished) });
    running = r.version;
    last = finished;
  }
  logger.firmware = running;
}

function report(releaseId: string, state: PlannedReport['state'], offeredAt: Date, updatedAt: Date): PlannedReport {
  return { releaseId, state, reason: null, detail: null, offeredAt, updatedAt, finishedAt: null, confirmedAt: null };
}
