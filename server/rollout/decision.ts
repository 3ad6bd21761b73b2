// The offer decision (DEVICE_API.md "Who gets an offer", rules 1–6 in that order). Pure: no I/O, the
// clock comes in as `now`.
//
// It answers two questions at once: which release, if any, a logger is offered at this check-in, and
// for every release of its model, why it was or was not offered — the console's "Why no update?" and
// the lagging-sites screen read the second answer.
//
// Choices where the contract is silent (also stated in the device API's OpenAPI document):
// - Supply guard with no supply known at all (supply_v never reported): the guard does not block. The
//   contract blocks when the supply "is below" the minimum, and an unknown supply is not below it; a
//   firmware that does not report supply_v would otherwise never be updated.
// - A `failed` report without a reason counts as `other` (permanent until an operator retries): a
//   failure nobody can explain is not one to repeat on its own on a logger in the field.
// - An operator's retry clears the failure: offerInput (below) passes only reports made since the latest
//   retry of that release for that logger (or none).
// - A last report of `installed`: when the logger already runs that version or newer, the release is
//   not newer and so not a candidate (reason not_newer). When it still runs an older version, the
//   offer stands: either the report came just before the reboot into the new image (the firmware
//   holds the image already), or the bootloader rolled back, which the service records as failed
//   (other) before deciding — and then the release is excluded like any other failure.
// - Downloading, downloaded and installing: the offer stands, so the logger can resume its download.
// - Guards apply to the release chosen by rules 2–4: when the supply guard or that release's daylight
//   window blocks, nothing is offered at this check-in (we do not fall back to an older release, which
//   would cost the logger a second install later).
// - A daylight window asked for by a release whose site has no coordinates is not applied.
// - `considered` lists every release of the model, newest first by semantic-version precedence.
import { knownTimeZone, siteClock, utcClock } from '../../lib/site-time';
import { Range, SemVer } from 'semver';
import { isLive, type ReleaseState } from './lifecycle';
import { bucketOf, inShare, wholeShareIncluding } from './cohort';
import { daylightWindowAt } from './daylight';
import { retriedSince, type StoredReport } from './reports';
import { TRANSIENT_FAILURE_REASONS, type Channel, type FailureReason, type LoggerStatus, type ReportedInstallState } from '../../schemas/words';
import { REASON_CODES, type ReasonCode } from '../../schemas/fleet';

// The reason codes are named in schemas/fleet.ts: "Why no update?" sends them to the console.
export { REASON_CODES };
export type { ReasonCode };

/** The site's position, and its IANA time zone when known (the daylight window is then told in site time). */
export type SiteCoordinates = { latitude: number; longitude: number; timeZone?: string | null };

/** The logger as seen at this check-in, with what its model and site contribute to the decision. */
export type LoggerAtCheckIn = {
  id: string;
  status: LoggerStatus;
  siteId: string | null;
  /** Board revision label, e.g. "B". */
  board: string;
  channel: Channel;
  /** Version now running (this check-in's `firmware`); null when it has never checked in (console view). */
  firmware: string | null;
  /** Highest manifest security counter the logger has accepted, as sent in this check-in. */
  securityCounter: number;
  /** This check-in's supply_v, else the most recent one reported, else null (never reported). */
  supplyV: number | null;
  /** The model's minimum supply voltage for an update (supply guard). */
  minUpdateSupplyV: number;
  /** The site's coordinates, or null when the site has none. */
  siteCoordinates: SiteCoordinates | null;
};

/** A release of the logger's model with its targeting. The service may pass a richer object; the offer returns it as given. */
export type ReleaseTargeting = {
  id: string;
  version: string;
  channel: Channel;
  state: ReleaseState;
  /** Rollout share in percent, 0–100; used in the widening state. */
  share: number;
  /** Board revisions the release is for. */
  boards: readonly string[];
  /** Upgrade-from range in the semver package's syntax (evaluated with pre-releases included), or null for any. */
  upgradeFrom: string | null;
  securityCounter: number;
  pilotSiteIds: readonly string[];
  /** Offer only between sunrise + 1 h and sunset − 1 h at the site. */
  daylightWindow: boolean;
  /**
   * The version and upgrade-from range parsed once (parseTargeting); the release cache keeps them, so a
   * check-in parses no release's version or range. When absent, the decision parses them itself.
   */
  parsed?: ParsedTargeting;
  /** The signed manifest's `expires`: from that instant on the release offers nothing (absent or null: no expiry). */
  expiresAt?: Date | null;
};

/** A release's version and upgrade-from range as semver objects, parsed once. */
export type ParsedTargeting = {
  /** null: the version is not a semantic version. */
  version: SemVer | null;
  /** null: no range (any running version); 'invalid': the text does not parse as a range. */
  upgradeFrom: Range | null | 'invalid';
};

const RANGE_OPTIONS = { includePrerelease: true } as const;

/** Parses a version strictly (semver.org §2 … §11), or null. */
export function parseVersion(text: string | null): SemVer | null {
  if (text === null) return null;
  try {
    return new SemVer(text);
  } catch {
    return null;
  }
}

/** Parses a release's version and upgrade-from range (the semver package's syntax, pre-releases included). */
export function parseTargeting(release: Pick<ReleaseTargeting, 'version' | 'upgradeFrom'>): ParsedTargeting {
  const text = release.upgradeFrom?.trim() ?? '';
  let upgradeFrom: ParsedTargeting['upgradeFrom'] = null;
  if (text !== '') {
    try {
      upgradeFrom = new Range(text, RANGE_OPTIONS);
    } catch {
      upgradeFrom = 'invalid';
    }
  }
  return { version: parseVersion(release.version), upgradeFrom };
}

/** The release with its parsed targeting attached (the release cache and "Why no update?" keep these). */
export function withParsedTargeting<R extends ReleaseTargeting>(release: R): R & { parsed: ParsedTargeting } {
  return { ...release, parsed: parseTargeting(release) };
}

const parsedOf = (r: ReleaseTargeting): ParsedTargeting => r.parsed ?? parseTargeting(r);

export type LastInstallReport = { state: ReportedInstallState; reason?: FailureReason | null };

export type OfferInput<R extends ReleaseTargeting = ReleaseTargeting> = {
  logger: LoggerAtCheckIn;
  /** Every release of the logger's model, in any state and on any channel. */
  releases: readonly R[];
  /** The logger's last install report per release id (only reports since an operator's latest retry). */
  lastReports: Readonly<Record<string, LastInstallReport | undefined>>;
  now: Date;
};

/** Short labels for the console ("Why no update?", lagging sites). */
export const REASON_LABELS: Record<ReasonCode, string> = {
  offered: 'Offered',
  stepping_stone: 'Offered as a stepping stone',
  retired: 'Logger retired',
  not_enrolled: 'Not enrolled at a site',
  firmware_unknown: 'Running version unknown',
  wrong_channel: 'Other channel',
  not_live: 'Release not live',
  manifest_expired: 'Signed manifest expired',
  board_not_supported: 'Board revision not targeted by the release',
  not_newer: 'Not newer than the running version',
  security_counter_too_low: 'Security counter below the logger’s',
  failed_awaiting_retry: 'Install failed, awaiting retry',
  not_pilot_site: 'Not a pilot site',
  outside_share: 'Not yet in the rollout share',
  needs_stepping_stone: 'Needs a stepping-stone release first',
  superseded: 'A newer release comes first',
  low_supply: 'Low supply: below the update minimum',
  outside_daylight_window: 'Outside the daylight window',
};

export function reasonLabel(code: ReasonCode): string {
  return REASON_LABELS[code];
}

export type ReleaseVerdict = {
  releaseId: string;
  version: string;
  outcome: 'offered' | 'not_offered';
  reason: ReasonCode;
  /** One sentence with the figures behind the reason, for support. */
  detail: string;
};

export type OfferDecision<R extends ReleaseTargeting = ReleaseTargeting> = {
  offer: R | null;
  considered: ReleaseVerdict[];
};

/** How a refusal names a release's state ("The release is paused."); a new state reads "is <state>". */
function statePhrase(state: ReleaseState): string {
  if (state === 'draft') return 'is still a draft';
  if (state === 'withdrawn') return 'was withdrawn';
  return `is ${state}`;
}

/** Newest first by semantic-version precedence; versions that do not parse go last; ties by id. */
const newestFirst = (parsed: Map<ReleaseTargeting, ParsedTargeting>) => (a: ReleaseTargeting, b: ReleaseTargeting): number => {
  const va = parsed.get(a)!.version;
  const vb = parsed.get(b)!.version;
  if (va && vb) {
    const c = vb.compare(va);
    if (c !== 0) return c;
  } else if (va || vb) {
    return va ? -1 : 1;
  }
  return a.id < b.id ? -1 : a.id > b.id ? 1 : 0;
};

type RangeCheck = { admits: true } | { admits: false; why: string };

/** Rule 4: does the release's upgrade-from range admit the running version (pre-releases included)? */
function admitsUpgradeFrom(release: ReleaseTargeting, parsed: ParsedTargeting, running: SemVer): RangeCheck {
  const range = parsed.upgradeFrom;
  const text = release.upgradeFrom?.trim() ?? '';
  if (range === null) return { admits: true };
  if (range === 'invalid') return { admits: false, why: `its upgrade-from range "${text}" does not parse` };
  return range.test(running) ? { admits: true } : { admits: false, why: `${running.version} is outside its upgrade-from range ${text}` };
}

function failedAwaitingRetry(report: LastInstallReport | undefined): FailureReason | null {
  if (!report || report.state !== 'failed') return null;
  const reason = report.reason ?? 'other';
  return (TRANSIENT_FAILURE_REASONS as readonly FailureReason[]).includes(reason) ? null : reason;
}

/** Volts to a tenth of a millivolt, so a supply just under the minimum never reads as equal to it. */
function formatVolts(v: number): string {
  return `${Number(v.toFixed(4))} V`;
}

/** The daylight window as a sentence: in the site's time with UTC beside it, or in UTC when the zone is not known. */
function windowText(opens: Date, closes: Date, timeZone: string | null | undefined): string {
  if (!timeZone || !knownTimeZone(timeZone)) return `${utcClock(opens)} to ${utcClock(closes)} at the site today`;
  return `${siteClock(opens, timeZone)} to ${siteClock(closes, timeZone)} at the site today (${utcClock(opens)} to ${utcClock(closes)})`;
}

// ─── The decision's input ───────────────────────────────────────────────────

/**
 * What the database knows of a logger for the decision: its row (or, at a check-in, what the check-in
 * says and the row keeps), its model's supply guard, and its site's two coordinates.
 */
export type LoggerFacts = Omit<LoggerAtCheckIn, 'siteCoordinates'> & { latitude: number | null; longitude: number | null; timeZone?: string | null };

/** One install report of the logger as stored: its state and reason, when it last changed and was retried. */
export type ReportFacts = Pick<StoredReport, 'state' | 'reason' | 'updatedAt' | 'retriedAt'> & { releaseId: string };

/**
 * The decision's input, built in one place for the check-in, "Why no update?" and the lagging sites, so
 * all three decide alike: the logger's reports count from an operator's latest retry on (a retried
 * report is no report), and an offer alone is no report either.
 */
export function offerInput<R extends ReleaseTargeting>(logger: LoggerFacts, releases: readonly R[], reports: readonly ReportFacts[], now: Date): OfferInput<R> {
  const lastReports: Record<string, LastInstallReport | undefined> = {};
  for (const r of reports) {
    if (r.state === 'offered' || retriedSince(r)) continue;
    lastReports[r.releaseId] = { state: r.state, reason: (r.reason as FailureReason | null) ?? null };
  }
  const { latitude, longitude } = logger;
  return {
    logger: {
      id: logger.id,
      status: logger.status,
      siteId: logger.siteId,
      board: logger.board,
      channel: logger.channel,
      firmware: logger.firmware,
      // Read from SQL, numbers may arrive as text (NUMERIC, BIGINT).
      securityCounter: Number(logger.securityCounter),
      supplyV: logger.supplyV === null ? null : Number(logger.supplyV),
      minUpdateSupplyV: Number(logger.minUpdateSupplyV),
      siteCoordinates: latitude !== null && longitude !== null ? { latitude: Number(latitude), longitude: Number(longitude), timeZone: logger.timeZone ?? null } : null,
    },
    releases,
    lastReports,
    now,
  };
}

export function decideOffer<R extends ReleaseTargeting>(input: OfferInput<R>): OfferDecision<R> {
  const { logger, lastReports, now } = input;
  // Releases from the cache come parsed; others are parsed here, once each.
  const parsed = new Map<ReleaseTargeting, ParsedTargeting>(input.releases.map((r) => [r, parsedOf(r)]));
  const releases = [...input.releases].sort(newestFirst(parsed));
  const upgradeFromAdmits = (r: R, version: SemVer) => admitsUpgradeFrom(r, parsed.get(r)!, version);
  const verdicts = new Map<string, Omit<ReleaseVerdict, 'releaseId' | 'version'>>();
  const refuse = (r: R, reason: ReasonCode, detail: string) => verdicts.set(r.id, { outcome: 'not_offered', reason, detail });
  const finish = (offer: R | null): OfferDecision<R> => ({
    offer,
    considered: releases.map((r) => ({ releaseId: r.id, version: r.version, ...verdicts.get(r.id)! })),
  });
  const refuseAll = (reason: ReasonCode, detail: string) => {
    for (const r of releases) refuse(r, reason, detail);
    return finish(null);
  };

  // Rule 1: enrolled at a site and not retired.
  if (logger.status === 'retired') return refuseAll('retired', 'The logger is retired; it is offered nothing.');
  if (logger.status !== 'enrolled' || !logger.siteId) return refuseAll('not_enrolled', 'The logger is not enrolled at a site yet.');
  // The reported version, parsed once for this decision.
  const running = parseVersion(logger.firmware);
  if (running === null) {
    return refuseAll(
      'firmware_unknown',
      logger.firmware === null ? 'The logger has not reported its running version yet.' : `The running version "${logger.firmware}" is not a semantic version.`,
    );
  }

  // Rule 2 (with rule 6): candidates by channel, live state, board, version, security counter, and no
  // unresolved failure.
  const candidates: R[] = [];
  for (const r of releases) {
    const version = parsed.get(r)!.version;
    const failure = failedAwaitingRetry(lastReports[r.id]);
    if (r.channel !== logger.channel) {
      refuse(r, 'wrong_channel', `The release is on the ${r.channel} channel; the logger follows ${logger.channel}.`);
    } else if (!isLive(r.state)) {
      refuse(r, 'not_live', `The release ${statePhrase(r.state)}.`);
    } else if (r.expiresAt && r.expiresAt.getTime() <= now.getTime()) {
      refuse(r, 'manifest_expired', `Its signed manifest expired at ${r.expiresAt.toISOString().replace(/\.\d{3}Z$/, 'Z')}; a logger would refuse it. Sign it anew with a later expiry.`);
    } else if (!r.boards.includes(logger.board)) {
      refuse(r, 'board_not_supported', `Board ${logger.board} is not among the release's boards (${r.boards.join(', ') || 'none'}).`);
    } else if (version === null || version.compare(running) <= 0) {
      refuse(r, 'not_newer', version === null ? `The release version "${r.version}" is not a semantic version.` : `${r.version} is not newer than the running ${running.version}.`);
    } else if (r.securityCounter < logger.securityCounter) {
      refuse(r, 'security_counter_too_low', `Its security counter ${r.securityCounter} is below the logger's ${logger.securityCounter}; the logger would refuse it.`);
    } else if (failure) {
      refuse(r, 'failed_awaiting_retry', `The last install failed (${failure}); it is not offered again until an operator retries it.`);
    } else {
      candidates.push(r);
    }
  }

  // Rule 3: pilot sites, rollout share, complete. Pilot sites stay eligible in every later live state.
  const eligible: R[] = [];
  const basis = new Map<string, string>();
  for (const r of candidates) {
    const pilotSite = r.pilotSiteIds.includes(logger.siteId);
    if (r.state === 'pilot') {
      if (pilotSite) {
        eligible.push(r);
        basis.set(r.id, 'the site is a pilot site');
      } else {
        refuse(r, 'not_pilot_site', r.pilotSiteIds.length === 0 ? 'The release is in pilot and has no pilot sites yet.' : 'The release is in pilot and the logger’s site is not one of its pilot sites.');
      }
    } else if (r.state === 'widening') {
      const bucket = bucketOf(logger.id, r.id);
      if (pilotSite) {
        eligible.push(r);
        basis.set(r.id, 'the site is a pilot site');
      } else if (inShare(bucket, r.share)) {
        eligible.push(r);
        basis.set(r.id, `bucket ${bucket} is below ${r.share} % × 100`);
      } else {
        refuse(r, 'outside_share', `Later in the rollout order: it will be offered once the share reaches ${wholeShareIncluding(bucket)} % (today ${r.share} %; place ${bucket} of 10 000).`);
      }
    } else {
      eligible.push(r);
      basis.set(r.id, 'the release is complete (offered to all)');
    }
  }
  if (eligible.length === 0) return finish(null);

  // Rule 4: the newest eligible release, or the highest one whose upgrade-from range admits the
  // running version (a stepping stone); one hop per check-in.
  const newest = eligible[0];
  const newestCheck = upgradeFromAdmits(newest, running);
  const pick = newestCheck.admits ? newest : (eligible.find((r) => upgradeFromAdmits(r, running).admits) ?? null);
  for (const r of eligible) {
    if (r === pick) continue;
    const check = upgradeFromAdmits(r, running);
    if (!check.admits) {
      const next = pick ? `${pick.version} goes first as a stepping stone` : 'no release on the channel admits it yet';
      refuse(r, 'needs_stepping_stone', `It cannot be installed directly: ${check.why}; ${next}.`);
    } else {
      refuse(r, 'superseded', `${pick!.version} comes first; ${r.version} is not needed on the way.`);
    }
  }
  if (!pick) return finish(null);

  // Rule 5: supply guard, then the chosen release's daylight window.
  const notes: string[] = [];
  const supply = logger.supplyV;
  if (supply !== null && Number.isFinite(supply)) {
    if (supply < logger.minUpdateSupplyV) {
      refuse(pick, 'low_supply', `Supply ${formatVolts(supply)} is below the model's minimum of ${formatVolts(logger.minUpdateSupplyV)} for an update.`);
      return finish(null);
    }
  } else {
    notes.push('no supply voltage reported, supply guard not applied');
  }
  if (pick.daylightWindow) {
    const site = logger.siteCoordinates;
    if (!site) {
      notes.push('the site has no coordinates, daylight window not applied');
    } else {
      const window = daylightWindowAt(now, site.latitude, site.longitude);
      const t = now.getTime();
      if (window.kind === 'polar_night') {
        refuse(pick, 'outside_daylight_window', 'The release waits for daylight, and the Sun does not rise at the site today.');
        return finish(null);
      }
      if (window.kind === 'window' && (t < window.opens.getTime() || t > window.closes.getTime())) {
        refuse(pick, 'outside_daylight_window', `The release waits for the daylight window, ${windowText(window.opens, window.closes, site.timeZone)}.`);
        return finish(null);
      }
    }
  }

  const why = [basis.get(pick.id)!, ...notes].join('; ');
  if (pick === newest) {
    verdicts.set(pick.id, { outcome: 'offered', reason: 'offered', detail: `Offered ${pick.version}: ${why}.` });
  } else {
    const blocked = newestCheck.admits ? '' : newestCheck.why;
    verdicts.set(pick.id, {
      outcome: 'offered',
      reason: 'stepping_stone',
      detail: `Offered ${pick.version} as a stepping stone towards ${newest.version} (${blocked}): ${why}.`,
    });
  }
  return finish(pick);
}
