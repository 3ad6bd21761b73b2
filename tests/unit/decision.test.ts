import semver from 'semver';
import { getTimes } from 'suncalc';
import {
  decideOffer,
  REASON_CODES,
  REASON_LABELS,
  reasonLabel,
  type LastInstallReport,
  type LoggerAtCheckIn,
  type OfferDecision,
  type ReasonCode,
  type ReleaseTargeting,
  withParsedTargeting,
} from '../../server/rollout/decision';
import type { FailureReason } from '../../schemas/words';

// The rules under test are DEVICE_API.md "Who gets an offer", 1–6. Outside references used below:
// semver.org §10–11 (docs/SOURCES.md §4) and the semver package for version precedence and ranges, the
// bucket formula recomputed with node:crypto in cohort.test.ts (values repeated here as literals), and
// suncalc for sunrise and sunset. Demo data: PRODUCT.md (Fernhollow Energy Co-op, FL-2 field logger).

const PILOT_SITE = '7b0c1d2e-3f40-4a51-8b62-c7d8e9f0a1b2'; // Aldmere village hall
const OTHER_SITE = '9d8c7b6a-5f4e-4d3c-8b2a-1f0e9d8c7b6a'; // Brackenford pump house
const VALE = { latitude: 52.14, longitude: -1.98 };

// Release ids. Buckets against R230 (computed with node:crypto, see cohort.test.ts):
const R214 = '1a2b3c4d-0000-4000-8000-000000000214';
const R210 = '1a2b3c4d-0000-4000-8000-000000000210';
const R221 = '1a2b3c4d-0000-4000-8000-000000000221';
const R230 = 'c4e2a9f1-0b7d-4e3c-9a58-6d1f2e3b4c5a';
const LOGGER_BUCKET_0 = '5e1a0000-0000-4000-8000-00000000092a';
const LOGGER_BUCKET_499 = '5e1a0000-0000-4000-8000-000000003114';
const LOGGER_BUCKET_500 = '5e1a0000-0000-4000-8000-000000001905';
const LOGGER_BUCKET_2499 = '5e1a0000-0000-4000-8000-000000002473';
const LOGGER_BUCKET_2500 = '5e1a0000-0000-4000-8000-000000001a77';

const NOON = new Date('2026-11-30T12:00:00Z');

function logger(overrides: Partial<LoggerAtCheckIn> = {}): LoggerAtCheckIn {
  return {
    id: LOGGER_BUCKET_499,
    status: 'enrolled',
    siteId: OTHER_SITE,
    board: 'B',
    channel: 'stable',
    firmware: '2.2.0',
    securityCounter: 3,
    supplyV: 12.4,
    minUpdateSupplyV: 3.3,
    siteCoordinates: VALE,
    ...overrides,
  };
}

function release(overrides: Partial<ReleaseTargeting> = {}): ReleaseTargeting {
  return {
    id: R230,
    version: '2.3.0',
    channel: 'stable',
    state: 'complete',
    share: 100,
    boards: ['A', 'B', 'C'],
    upgradeFrom: '>=2.1.0',
    securityCounter: 4,
    pilotSiteIds: [PILOT_SITE],
    daylightWindow: false,
    ...overrides,
  };
}

function decide(opts: {
  logger?: Partial<LoggerAtCheckIn>;
  releases?: ReleaseTargeting[];
  reports?: Record<string, LastInstallReport>;
  now?: Date;
}): OfferDecision {
  return decideOffer({ logger: logger(opts.logger), releases: opts.releases ?? [release()], lastReports: opts.reports ?? {}, now: opts.now ?? NOON });
}

function verdictOf(decision: OfferDecision, releaseId: string) {
  const v = decision.considered.find((c) => c.releaseId === releaseId);
  if (!v) throw new Error(`release ${releaseId} was not considered`);
  return v;
}

/** The single release's reason, and whether it was offered. */
function single(decision: OfferDecision): { reason: ReasonCode; offered: boolean } {
  expect(decision.considered).toHaveLength(1);
  const [v] = decision.considered;
  expect(v.outcome === 'offered').toBe(decision.offer !== null);
  return { reason: v.reason, offered: decision.offer !== null };
}

describe('offer decision', () => {
  describe('rule 1: enrolled, not retired', () => {
    test.each([
      { when: 'the logger is retired', l: { status: 'retired' as const }, reason: 'retired' },
      { when: 'the logger is registered but not enrolled', l: { status: 'registered' as const, siteId: null }, reason: 'not_enrolled' },
      { when: 'the logger is marked enrolled but has no site', l: { siteId: null }, reason: 'not_enrolled' },
      { when: 'the logger has never reported its version', l: { firmware: null }, reason: 'firmware_unknown' },
      { when: 'the running version is not a semantic version', l: { firmware: 'two' }, reason: 'firmware_unknown' },
    ])('when $when, then no release is offered and each says $reason', ({ l, reason }) => {
      const d = decide({ logger: l, releases: [release(), release({ id: R214, version: '2.1.4', upgradeFrom: null })] });
      expect(d.offer).toBeNull();
      expect(d.considered.map((c) => c.reason)).toEqual([reason, reason]);
      expect(d.considered.every((c) => c.outcome === 'not_offered' && c.detail.length > 0)).toBe(true);
    });

    test('when the model has no release on the logger\'s channel, then nothing is offered and each release says wrong_channel', () => {
      const d = decide({ logger: { channel: 'early' }, releases: [release(), release({ id: R214, version: '2.1.4' })] });
      expect(d.offer).toBeNull();
      expect(d.considered.map((c) => c.reason)).toEqual(['wrong_channel', 'wrong_channel']);
    });

    test('when the model has no releases at all, then nothing is offered and nothing is considered', () => {
      expect(decide({ releases: [] })).toEqual({ offer: null, considered: [] });
    });
  });

  describe('rule 2: candidates', () => {
    test.each([
      { when: 'the release is on the early channel and the logger on stable', r: { channel: 'early' as const }, l: {}, reason: 'wrong_channel' },
      { when: 'the release is a draft', r: { state: 'draft' as const }, l: {}, reason: 'not_live' },
      { when: "the logger's board is not in the release's list", r: { boards: ['B', 'C'] }, l: { board: 'A' }, reason: 'board_not_supported' },
      { when: 'the release has no boards', r: { boards: [] }, l: {}, reason: 'board_not_supported' },
      { when: 'the release is the running version', r: {}, l: { firmware: '2.3.0' }, reason: 'not_newer' },
      { when: 'the release is older than the running version', r: {}, l: { firmware: '2.4.0' }, reason: 'not_newer' },
      { when: "the release's security counter is below the logger's", r: { securityCounter: 4 }, l: { securityCounter: 5 }, reason: 'security_counter_too_low' },
      { when: "the release's security counter equals the logger's", r: { securityCounter: 5 }, l: { securityCounter: 5 }, reason: 'offered' },
      { when: 'the release is newer, live, for the board, same channel', r: {}, l: {}, reason: 'offered' },
      { when: 'the logger is on board A and A is listed', r: { boards: ['A'] }, l: { board: 'A' }, reason: 'offered' },
    ])('when $when, then the reason is $reason', ({ r, l, reason }) => {
      const d = decide({ logger: l, releases: [release(r)] });
      expect(single(d)).toEqual({ reason, offered: reason === 'offered' });
    });

    // semver.org §11 (docs/SOURCES.md §4) precedence: pre-releases rank below the normal version;
    // semver.org §10: build metadata is ignored for precedence.
    test.each([
      { channel: 'early' as const, running: '3.0.0-rc.1', version: '3.0.0', offered: true },
      { channel: 'early' as const, running: '3.0.0', version: '3.0.0-rc.1', offered: false },
      { channel: 'early' as const, running: '2.3.0', version: '3.0.0-rc.1', offered: true },
      { channel: 'stable' as const, running: '2.3.0-beta.2', version: '2.3.0', offered: true },
      { channel: 'stable' as const, running: '2.3.0', version: '2.3.0-beta.2', offered: false },
      { channel: 'stable' as const, running: '2.3.0+build.5', version: '2.3.0+build.7', offered: false },
      { channel: 'stable' as const, running: '2.9.0', version: '2.10.0', offered: true },
    ])('when a $channel logger runs $running and the release is $version, then offered is $offered', ({ channel, running, version, offered }) => {
      const d = decide({ logger: { channel, firmware: running }, releases: [release({ channel, version, upgradeFrom: null })] });
      expect(single(d)).toEqual({ reason: offered ? 'offered' : 'not_newer', offered });
      expect(semver.gt(version, running)).toBe(offered);
    });

    const chain = ['1.0.0-alpha', '1.0.0-alpha.1', '1.0.0-alpha.beta', '1.0.0-beta', '1.0.0-beta.2', '1.0.0-beta.11', '1.0.0-rc.1', '1.0.0'];
    test.each(chain.slice(1).map((higher, i) => ({ lower: chain[i], higher })))(
      'when the semver.org §11 chain step $lower < $higher is checked, then $higher is offered over $lower and not the reverse',
      ({ lower, higher }) => {
        const up = decide({ logger: { channel: 'early', firmware: lower }, releases: [release({ channel: 'early', version: higher, upgradeFrom: null })] });
        const down = decide({ logger: { channel: 'early', firmware: higher }, releases: [release({ channel: 'early', version: lower, upgradeFrom: null })] });
        expect(single(up)).toEqual({ reason: 'offered', offered: true });
        expect(single(down)).toEqual({ reason: 'not_newer', offered: false });
      },
    );
  });

  describe('rule 3: pilot sites and rollout share', () => {
    // Buckets of these loggers for release R230: 0, 499, 500, 2499, 2500 (cohort.test.ts, node:crypto).
    test.each([
      { when: 'bucket 499 and share 5 %', id: LOGGER_BUCKET_499, share: 5, reason: 'offered' },
      { when: 'bucket 500 and share 5 %', id: LOGGER_BUCKET_500, share: 5, reason: 'outside_share' },
      { when: 'bucket 0 and share 1 %', id: LOGGER_BUCKET_0, share: 1, reason: 'offered' },
      { when: 'bucket 2499 and share 25 %', id: LOGGER_BUCKET_2499, share: 25, reason: 'offered' },
      { when: 'bucket 2500 and share 25 %', id: LOGGER_BUCKET_2500, share: 25, reason: 'outside_share' },
      { when: 'bucket 500 and share 25 %', id: LOGGER_BUCKET_500, share: 25, reason: 'offered' },
      { when: 'bucket 2500 and share 25.01 %', id: LOGGER_BUCKET_2500, share: 25.01, reason: 'offered' },
    ])('when an widening release meets a logger with $when, then the reason is $reason', ({ id, share, reason }) => {
      const d = decide({ logger: { id }, releases: [release({ state: 'widening', share })] });
      expect(single(d)).toEqual({ reason, offered: reason === 'offered' });
    });

    test('when a logger is outside the share, then the detail names its bucket and the threshold', () => {
      const d = decide({ logger: { id: LOGGER_BUCKET_500 }, releases: [release({ state: 'widening', share: 5 })] });
      expect(d.considered[0].detail).toContain('500');
      expect(d.considered[0].detail).toContain('5 %');
    });

    test('when the share widens from 5 % to 25 %, then the logger at bucket 500 joins and the one at 499 stays', () => {
      for (const [id, at5, at25] of [
        [LOGGER_BUCKET_499, true, true],
        [LOGGER_BUCKET_500, false, true],
        [LOGGER_BUCKET_2500, false, false],
      ] as const) {
        expect(decide({ logger: { id }, releases: [release({ state: 'widening', share: 5 })] }).offer !== null).toBe(at5);
        expect(decide({ logger: { id }, releases: [release({ state: 'widening', share: 25 })] }).offer !== null).toBe(at25);
      }
    });

    test.each([
      { when: 'a pilot release and the logger is at a pilot site', state: 'pilot' as const, site: PILOT_SITE, pilots: [PILOT_SITE], reason: 'offered' },
      { when: 'a pilot release and the logger is elsewhere', state: 'pilot' as const, site: OTHER_SITE, pilots: [PILOT_SITE], reason: 'not_pilot_site' },
      { when: 'a pilot release with no pilot sites', state: 'pilot' as const, site: PILOT_SITE, pilots: [], reason: 'not_pilot_site' },
      { when: 'an widening release, a pilot site, bucket outside the share', state: 'widening' as const, site: PILOT_SITE, pilots: [PILOT_SITE], reason: 'offered' },
      { when: 'an widening release, not a pilot site, bucket outside the share', state: 'widening' as const, site: OTHER_SITE, pilots: [PILOT_SITE], reason: 'outside_share' },
      { when: 'a complete release and the logger is at a pilot site', state: 'complete' as const, site: PILOT_SITE, pilots: [PILOT_SITE], reason: 'offered' },
      { when: 'a complete release and the logger is elsewhere, bucket 2500', state: 'complete' as const, site: OTHER_SITE, pilots: [PILOT_SITE], reason: 'offered' },
    ])('when $when, then the reason is $reason', ({ state, site, pilots, reason }) => {
      const share = state === 'pilot' ? 0 : state === 'widening' ? 5 : 100;
      const d = decide({ logger: { id: LOGGER_BUCKET_2500, siteId: site }, releases: [release({ state, share, pilotSiteIds: pilots })] });
      expect(single(d)).toEqual({ reason, offered: reason === 'offered' });
    });
  });

  describe('rule 4: upgrade-from and stepping stones', () => {
    // PRODUCT.md demo: release 2.3.0 needs 2.1.x or later; 2.0.x must step through 2.1.4.
    const demo = () => [
      release({ id: R230, version: '2.3.0', upgradeFrom: '>=2.1.0' }),
      release({ id: R214, version: '2.1.4', upgradeFrom: null, securityCounter: 3 }),
      release({ id: R210, version: '2.1.0', upgradeFrom: null, securityCounter: 3 }),
    ];

    test('when a logger on 2.0.3 checks in, then it gets 2.1.4 as a stepping stone, and 2.3.0 at its next check-in', () => {
      const first = decide({ logger: { firmware: '2.0.3' }, releases: demo() });
      expect(first.offer?.version).toBe('2.1.4');
      expect(verdictOf(first, R214)).toMatchObject({ outcome: 'offered', reason: 'stepping_stone' });
      expect(verdictOf(first, R230)).toMatchObject({ outcome: 'not_offered', reason: 'needs_stepping_stone' });
      expect(verdictOf(first, R230).detail).toContain('2.1.4');
      expect(verdictOf(first, R210)).toMatchObject({ outcome: 'not_offered', reason: 'superseded' });

      const next = decide({ logger: { firmware: '2.1.4' }, releases: demo(), reports: { [R214]: { state: 'installed' } } });
      expect(next.offer?.version).toBe('2.3.0');
      expect(verdictOf(next, R230)).toMatchObject({ outcome: 'offered', reason: 'offered' });
      expect(verdictOf(next, R214).reason).toBe('not_newer');
      expect(verdictOf(next, R210).reason).toBe('not_newer');
    });

    test('when a logger already runs 2.1.x, then it gets 2.3.0 directly', () => {
      const d = decide({ logger: { firmware: '2.1.0' }, releases: demo() });
      expect(d.offer?.version).toBe('2.3.0');
      expect(verdictOf(d, R214).reason).toBe('superseded');
    });

    test.each([
      // semver package with includePrerelease: 2.2.0-rc.1 satisfies >=2.1.0; without the option it would not
      { running: '2.2.0-rc.1', version: '2.3.0', offered: true },
      // 2.1.0-beta.1 ranks below 2.1.0 (semver.org §11), so it is outside >=2.1.0: the stepping stone goes first
      { running: '2.1.0-beta.1', version: '2.1.4', offered: true },
      { running: '2.0.9', version: '2.1.4', offered: true },
    ])('when the logger runs $running, then it is offered $version', ({ running, version }) => {
      const d = decide({ logger: { firmware: running }, releases: demo() });
      expect(d.offer?.version).toBe(version);
      const admitted = semver.satisfies(running, '>=2.1.0', { includePrerelease: true });
      expect(d.offer?.version === '2.3.0').toBe(admitted);
    });

    test('when no release on the channel admits the running version, then nothing is offered and the newest says needs_stepping_stone', () => {
      const d = decide({ logger: { firmware: '2.0.3' }, releases: [release()] });
      expect(single(d)).toEqual({ reason: 'needs_stepping_stone', offered: false });
    });

    test('when the upgrade-from range does not parse, then the release is not offered directly and the detail says so', () => {
      const d = decide({ releases: [release({ upgradeFrom: '>=2.1.0 <<' })] });
      expect(single(d)).toEqual({ reason: 'needs_stepping_stone', offered: false });
      expect(d.considered[0].detail).toContain('does not parse');
    });

    test('when the newest release is outside the share, then the highest eligible one is offered plainly (not as a stepping stone)', () => {
      const releases = [release({ id: R230, state: 'widening', share: 5 }), release({ id: R214, version: '2.1.4', upgradeFrom: null })];
      const d = decide({ logger: { id: LOGGER_BUCKET_500, firmware: '2.0.3' }, releases });
      expect(d.offer?.id).toBe(R214);
      expect(verdictOf(d, R214).reason).toBe('offered');
      expect(verdictOf(d, R230).reason).toBe('outside_share');
    });

    test('when a stepping stone is itself blocked by the range of the one below, then the highest admitting release is offered (one hop)', () => {
      const releases = [
        release({ id: R230, version: '2.3.0', upgradeFrom: '>=2.2.0' }),
        release({ id: R221, version: '2.2.1', upgradeFrom: '>=2.1.0' }),
        release({ id: R214, version: '2.1.4', upgradeFrom: null }),
      ];
      const d = decide({ logger: { firmware: '2.0.3' }, releases });
      expect(d.offer?.id).toBe(R214);
      expect(d.considered.map((c) => c.reason)).toEqual(['needs_stepping_stone', 'needs_stepping_stone', 'stepping_stone']);
    });
  });

  describe('rule 5: supply guard', () => {
    test.each([
      { supplyV: 3.3, reason: 'offered' },
      { supplyV: 3.3 - 0.001, reason: 'low_supply' },
      { supplyV: 3.301, reason: 'offered' },
      { supplyV: 0, reason: 'low_supply' },
      { supplyV: 12.4, reason: 'offered' },
      { supplyV: null, reason: 'offered' },
    ])('when the supply is $supplyV V and the model minimum 3.3 V, then the reason is $reason', ({ supplyV, reason }) => {
      const d = decide({ logger: { supplyV, minUpdateSupplyV: 3.3 }, releases: [release()] });
      expect(single(d)).toEqual({ reason, offered: reason === 'offered' });
    });

    test('when no supply voltage is known, then the detail says the guard was not applied', () => {
      expect(decide({ logger: { supplyV: null } }).considered[0].detail).toContain('supply guard not applied');
    });

    test('when the supply is low and a stepping stone would be chosen, then the stepping stone carries low_supply and nothing is offered', () => {
      const releases = [release(), release({ id: R214, version: '2.1.4', upgradeFrom: null })];
      const d = decide({ logger: { firmware: '2.0.3', supplyV: 3.1 }, releases });
      expect(d.offer).toBeNull();
      expect(verdictOf(d, R214).reason).toBe('low_supply');
      expect(verdictOf(d, R230).reason).toBe('needs_stepping_stone');
    });
  });

  describe('rule 5: daylight window', () => {
    // Reference: suncalc's sunrise and sunset for the site on the day.
    const { sunrise, sunset } = getTimes(NOON, VALE.latitude, VALE.longitude);
    const at = (base: Date | null, minutes: number) => new Date(base!.getTime() + minutes * 60_000);

    test.each([
      { when: 'sunrise + 1 h − 1 min', now: at(sunrise, 59), reason: 'outside_daylight_window' },
      { when: 'sunrise + 1 h + 1 min', now: at(sunrise, 61), reason: 'offered' },
      { when: 'sunset − 1 h − 1 min', now: at(sunset, -61), reason: 'offered' },
      { when: 'sunset − 1 h + 1 min', now: at(sunset, -59), reason: 'outside_daylight_window' },
      { when: 'midnight', now: new Date('2026-11-30T00:00:00Z'), reason: 'outside_daylight_window' },
    ])('when the release asks for the window and it is $when at the site, then the reason is $reason', ({ now, reason }) => {
      const d = decide({ releases: [release({ daylightWindow: true })], now });
      expect(single(d)).toEqual({ reason, offered: reason === 'offered' });
    });

    test('when the site has a time zone, then the window is told in site time with UTC beside it (Europe/London in June: BST, UTC+1)', () => {
      // suncalc's sunrise and sunset (the reference above) ± 1 h; the EU rule of the tz database puts
      // London on BST, UTC+1, between the last Sundays of March and October (docs/SOURCES.md §18).
      const june = new Date('2026-06-21T12:00:00Z');
      const times = getTimes(june, VALE.latitude, VALE.longitude);
      const hhmm = (d: Date, plusHours: number) => new Date(d.getTime() + plusHours * 3_600_000).toISOString().slice(11, 16);
      const opens = at(times.sunrise, 60);
      const closes = at(times.sunset, -60);
      const d = decide({ logger: { siteCoordinates: { ...VALE, timeZone: 'Europe/London' } }, releases: [release({ daylightWindow: true })], now: new Date('2026-06-21T00:30:00Z') });
      expect(single(d).reason).toBe('outside_daylight_window');
      expect(d.considered[0].detail).toBe(
        `The release waits for the daylight window, ${hhmm(opens, 1)} BST to ${hhmm(closes, 1)} BST at the site today (${hhmm(opens, 0)} UTC to ${hhmm(closes, 0)} UTC).`,
      );
    });

    test('when the release does not ask for the window, then it is offered at midnight', () => {
      const d = decide({ releases: [release({ daylightWindow: false })], now: new Date('2026-11-30T00:00:00Z') });
      expect(single(d)).toEqual({ reason: 'offered', offered: true });
    });

    test('when the release asks for the window but the site has no coordinates, then it is offered and the detail says why', () => {
      const d = decide({ logger: { siteCoordinates: null }, releases: [release({ daylightWindow: true })], now: new Date('2026-11-30T00:00:00Z') });
      expect(single(d)).toEqual({ reason: 'offered', offered: true });
      expect(d.considered[0].detail).toContain('no coordinates');
    });

    test('when the site is in polar night, then a release that asks for the window is not offered', () => {
      const d = decide({ logger: { siteCoordinates: { latitude: 78.22, longitude: 15.65 } }, releases: [release({ daylightWindow: true })], now: new Date('2026-12-21T12:00:00Z') });
      expect(single(d)).toEqual({ reason: 'outside_daylight_window', offered: false });
    });

    test('when the supply is low and it is also night, then the supply guard is the reason given (it comes first)', () => {
      const d = decide({ logger: { supplyV: 3.0 }, releases: [release({ daylightWindow: true })], now: new Date('2026-11-30T00:00:00Z') });
      expect(single(d).reason).toBe('low_supply');
    });
  });

  describe('rule 6: stopped, paused, withdrawn and install reports', () => {
    test.each(['paused', 'stopped', 'withdrawn', 'draft'] as const)('when the release is %s, then it offers nothing and the detail names the state', (state) => {
      const d = decide({ releases: [release({ state })] });
      expect(single(d)).toEqual({ reason: 'not_live', offered: false });
      expect(d.considered[0].detail).toContain(state === 'draft' ? 'draft' : state);
    });

    const permanent: Array<FailureReason | undefined> = ['integrity', 'signature', 'storage', 'unsupported', 'other', undefined];
    test.each(permanent.map((reason) => ({ reason })))('when the last report is failed with reason $reason, then the release waits for a retry', ({ reason }) => {
      const d = decide({ reports: { [R230]: { state: 'failed', reason } } });
      expect(single(d)).toEqual({ reason: 'failed_awaiting_retry', offered: false });
    });

    test.each(['connection', 'low_supply'] as const)('when the last report is failed with transient reason %s, then the offer stands', (reason) => {
      const d = decide({ reports: { [R230]: { state: 'failed', reason } } });
      expect(single(d)).toEqual({ reason: 'offered', offered: true });
    });

    test.each(['downloading', 'downloaded', 'installing'] as const)('when the last report is %s, then the offer stands so the download can resume', (state) => {
      expect(single(decide({ reports: { [R230]: { state } } }))).toEqual({ reason: 'offered', offered: true });
    });

    test('when the last report is installed and the logger runs that version, then the release is not newer', () => {
      const d = decide({ logger: { firmware: '2.3.0' }, reports: { [R230]: { state: 'installed' } } });
      expect(single(d)).toEqual({ reason: 'not_newer', offered: false });
    });

    test('when the last report is installed but the logger still runs the older version, then the offer stands (a rollback arrives as failed/other)', () => {
      const d = decide({ logger: { firmware: '2.2.0' }, reports: { [R230]: { state: 'installed' } } });
      expect(single(d)).toEqual({ reason: 'offered', offered: true });
    });

    test('when a report belongs to another release, then it does not affect this one', () => {
      expect(single(decide({ reports: { [R214]: { state: 'failed', reason: 'integrity' } } }))).toEqual({ reason: 'offered', offered: true });
    });

    test('when the newest release failed for good, then the other rules pick among the rest', () => {
      const releases = [release({ id: R230 }), release({ id: R221, version: '2.2.1', upgradeFrom: null })];
      const d = decide({ logger: { firmware: '2.2.0' }, releases, reports: { [R230]: { state: 'failed', reason: 'storage' } } });
      expect(d.offer?.id).toBe(R221);
      expect(verdictOf(d, R230).reason).toBe('failed_awaiting_retry');
      expect(verdictOf(d, R221)).toMatchObject({ outcome: 'offered', reason: 'offered' });
    });

    test('when the stepping stone failed for good, then a lower stepping stone is offered instead', () => {
      const releases = [release({ id: R230 }), release({ id: R214, version: '2.1.4', upgradeFrom: null }), release({ id: R210, version: '2.1.0', upgradeFrom: null })];
      const d = decide({ logger: { firmware: '2.0.3' }, releases, reports: { [R214]: { state: 'failed', reason: 'signature' } } });
      expect(d.offer?.id).toBe(R210);
      expect(d.considered.map((c) => [c.version, c.reason])).toEqual([
        ['2.3.0', 'needs_stepping_stone'],
        ['2.1.4', 'failed_awaiting_retry'],
        ['2.1.0', 'stepping_stone'],
      ]);
    });

    test('when the newest release is stopped, then the next live one is offered', () => {
      const releases = [release({ id: R230, state: 'stopped' }), release({ id: R221, version: '2.2.1', upgradeFrom: null })];
      const d = decide({ releases });
      expect(d.offer?.id).toBe(R221);
      expect(verdictOf(d, R230).reason).toBe('not_live');
    });
  });

  describe('the explanation', () => {
    const mixed = () => [
      release({ id: R214, version: '2.1.4', upgradeFrom: null }),
      release({ id: '1a2b3c4d-0000-4000-8000-000000000300', version: '3.0.0-rc.1', channel: 'early' }),
      release({ id: R230 }),
      release({ id: R210, version: '2.1.0', state: 'withdrawn' }),
    ];

    test('when several releases exist, then every one is considered once, newest first, and exactly one is offered', () => {
      const d = decide({ logger: { firmware: '2.0.3' }, releases: mixed() });
      expect(d.considered.map((c) => c.version)).toEqual(['3.0.0-rc.1', '2.3.0', '2.1.4', '2.1.0']);
      expect(d.considered.map((c) => c.reason)).toEqual(['wrong_channel', 'needs_stepping_stone', 'stepping_stone', 'not_live']);
      expect(d.considered.filter((c) => c.outcome === 'offered')).toHaveLength(1);
    });

    test('when a release is offered, then the offer is the very object passed in', () => {
      const releases = mixed();
      const d = decideOffer({ logger: logger({ firmware: '2.1.4' }), releases, lastReports: {}, now: NOON });
      expect(d.offer).toBe(releases[2]);
    });

    test('when the reason codes are listed, then each has its own label for the console', () => {
      const labels = REASON_CODES.map(reasonLabel);
      expect(labels.every((l) => l.trim().length > 0)).toBe(true);
      expect(new Set(labels).size).toBe(REASON_CODES.length);
      expect(Object.keys(REASON_LABELS).sort()).toEqual([...REASON_CODES].sort());
    });
  });
});

describe('releases parsed once (as the release cache keeps them)', () => {
  // The reference for each pick is the semver package's string functions (semver.org §11 precedence,
  // ranges with pre-releases included), applied here by hand to the same releases.
  const versions = ['2.0.3', '2.1.4', '2.2.0', '2.3.0', '2.3.1-rc.1', '2.4.0', 'not-a-version'];
  const ranges: (string | null)[] = [null, '>=2.1.0', '>=2.2.0 <2.3.0', '2.3.x', '^2.0.0', '>=2.3.1-rc.0', '>=>2', ''];
  const running = ['2.0.3', '2.1.4', '2.2.0', '2.3.0', '2.3.1-rc.1', 'junk'];

  test('when the same releases come parsed and unparsed, then every decision is the same, and the pick is the one the semver package gives', () => {
    let compared = 0;
    for (const [i, upgradeFrom] of ranges.entries()) {
      const releases = versions.map((version, k) =>
        release({ id: `1a2b3c4d-0000-4000-8000-${String(k).padStart(12, '0')}`, version, upgradeFrom: k % 2 === 0 ? upgradeFrom : ranges[(i + k) % ranges.length] }),
      );
      const parsed = releases.map((r) => withParsedTargeting(r));
      for (const firmware of running) {
        const input = { logger: logger({ firmware }), lastReports: {}, now: NOON };
        const plain = decideOffer({ ...input, releases });
        const cached = decideOffer({ ...input, releases: parsed });
        expect(cached.considered).toEqual(plain.considered);
        expect(cached.offer?.id).toBe(plain.offer?.id);
        // By hand: the newest valid release newer than the running version whose range admits it (or any
        // when its range is empty); when the newest does not admit it, the highest one that does.
        const valid = semver.valid(firmware);
        const admits = (r: ReleaseTargeting) => {
          const text = r.upgradeFrom?.trim() ?? '';
          if (text === '') return true;
          return semver.validRange(text, { includePrerelease: true }) !== null && semver.satisfies(valid!, text, { includePrerelease: true });
        };
        const newer = valid ? releases.filter((r) => semver.valid(r.version) && semver.gt(r.version, valid)).sort((a, b) => semver.rcompare(a.version, b.version)) : [];
        const expected = newer.find(admits) ?? null;
        expect(plain.offer?.id ?? null).toBe(expected?.id ?? null);
        compared++;
      }
    }
    expect(compared).toBe(ranges.length * running.length);
  });
});
