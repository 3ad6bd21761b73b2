// The one writer of release state changes. A person's action in the console (service.ts) and the trip
// rule at a check-in (trip.ts) move a release through the same steps, inside the caller's transaction
// and with the release row locked (lockRelease):
//   1. the lifecycle table (rollout/lifecycle.ts) decides the next state, or refuses (problem+json);
//   2. the release row: state, share, resume state, the first-entry stamp of the new state (piloted_at,
//      widened_at, completed_at, stopped_at: set only the first time), and who stopped it;
//   3. one release_transitions row and one activity row, whose code is the event's (RELEASE_EVENTS:
//      `release.stopped` whoever stopped it, with details.by 'person' or 'trip');
//   4. after commit: the release caches. The row is saved through the Release model, whose hooks drop
//      this process's release caches once the transaction commits, and the releases trigger (migration
//      0004) NOTIFYs every other process;
//   5. after commit: the mail rule. A trip mails the admins and release engineers, since nobody
//      watched it happen. A person's stop does not mail: the person chose it with a reason, and the
//      team reads it on the release page and in the activity log.
//
// Who stopped a release: `stopped_by` ('person' | 'trip') and, for a trip, `trip_figures` (the rule and
// the figures that tripped it) are written when the release is stopped and cleared when it is resumed,
// so they always describe the stop in force; a withdrawal keeps them, so a withdrawn release still
// tells how it came to be stopped.
import type { Transaction } from 'sequelize';
import { LoggerModel, Release, ReleaseTransition, User } from '../db/models';
import { recordActivity } from '../activity/service';
import type { RequestContext } from '../auth/actor';
import { Problem, problems } from '../http/problem';
import type { Mail, Mailer } from '../mail/mailer';
import { firstEnteredColumn, transition } from '../rollout/lifecycle';
import { tripHeadline } from '../rollout/trip';
import { releaseSigning } from './signing';
import { RELEASE_EVENTS, type ReleaseAction, type ReleaseState, type StoppedBy, type TripRule } from '../../schemas/words';
import type { Role } from '../../schemas/auth';
import type { TripFigures } from '../../schemas/releases';

/** What is asked: the action, with the share (widen) and the reason (required for stop, withdraw, resume from stopped). */
export type TransitionAction = { action: ReleaseAction; share?: number | null; reason?: string | null };

export type TransitionContext = RequestContext & {
  now: Date;
  mailer: Mailer;
  log?: { warn(o: object, msg: string): void; error(o: object, msg: string): void };
  /** Set when the trip rule stops the release: the rule and the figures that tripped it. */
  trip?: { rule: TripRule; figures: TripFigures } | null;
};

/** Who is told by e-mail when a release trips. */
export const TRIP_MAIL_ROLES = ['admin', 'release_engineer'] as const satisfies readonly Role[];

/** The columns a transition reads and writes (the manifest and signature stay in the database). */
const LOCKED_ATTRIBUTES = { exclude: ['manifest', 'signature'] as (keyof Release)[] };

/** The release row as `t` sees it, not locked. */
export async function readRelease(t: Transaction, id: string): Promise<Release | null> {
  return Release.findByPk(id, { transaction: t, attributes: LOCKED_ATTRIBUTES });
}

/** Locks the release row for this transaction; with skipLocked, gives up (null) when another transaction holds it. */
export async function lockRelease(t: Transaction, id: string, options: { skipLocked?: boolean } = {}): Promise<Release | null> {
  return Release.findByPk(id, { transaction: t, lock: t.LOCK.UPDATE, skipLocked: options.skipLocked ?? false, attributes: LOCKED_ATTRIBUTES });
}

const label = (release: { version: string }, modelName: string) => `${modelName} ${release.version}`;

const ACTION_WORDS: Record<ReleaseAction, string> = {
  start_pilot: 'started the pilot of',
  widen: 'widened',
  complete: 'completed the rollout of',
  pause: 'paused',
  resume: 'resumed',
  stop: 'stopped',
  withdraw: 'withdrew',
};

/**
 * Moves a release locked in `t` (lockRelease) through one lifecycle action and records it. Refusals are
 * thrown as problems (409 illegal in this state, 400 missing reason or bad share), before anything is
 * written. Returns the release as saved.
 */
export async function applyTransition(t: Transaction, release: Release, asked: TransitionAction, ctx: TransitionContext): Promise<Release> {
  const share = asked.share === undefined || asked.share === null ? undefined : Math.round(asked.share * 100) / 100;
  const signatures = asked.action === 'start_pilot' && release.state === 'draft' ? await signaturesOf(t, release) : null;
  const result = transition({ state: release.state, share: release.share, resumeState: release.resumeState }, asked.action, { share, reason: asked.reason, signatures });
  if (!result.ok) {
    const extensions = { allowedActions: result.allowedActions };
    if (result.code === 'illegal' || result.code === 'signatures_short') throw problems.conflict(result.detail, extensions);
    const path = result.code === 'reason_required' ? 'reason' : 'share';
    throw new Problem(400, 'invalid-request', 'The request is not valid', result.detail, { errors: [{ path, message: result.detail }], extensions });
  }

  const { now } = ctx;
  const from: ReleaseState = release.state;
  const to: ReleaseState = result.release.state;
  const reason = asked.reason?.trim() || null;
  const stoppedBy: StoppedBy | null = to === 'stopped' ? (ctx.trip ? 'trip' : 'person') : null;
  release.state = to;
  release.share = result.release.share;
  release.resumeState = result.release.resumeState;
  const stamp = firstEnteredColumn(from, to);
  if (stamp && !release.get(stamp)) release.set(stamp, now);
  if (to === 'stopped') {
    release.stoppedBy = stoppedBy;
    release.tripFigures = ctx.trip?.figures ?? null;
  } else if (asked.action === 'resume') {
    release.stoppedBy = null;
    release.tripFigures = null;
  }
  release.updatedAt = now;
  await release.save({ transaction: t });

  await ReleaseTransition.create(
    { releaseId: release.id, at: now, action: asked.action, fromState: from, toState: to, share: release.share, reason, actorType: ctx.actor.type, actorName: ctx.actor.name },
    { transaction: t },
  );
  const modelName = (await LoggerModel.findByPk(release.modelId, { transaction: t, attributes: ['name'] }))?.name ?? 'model';
  const name = label(release, modelName);
  const trip = asked.action === 'stop' ? ctx.trip ?? null : null;
  await recordActivity(t, ctx, {
    action: RELEASE_EVENTS[asked.action],
    targetType: 'release',
    targetId: release.id,
    summary: trip
      ? `${name} tripped: ${tripHeadline(trip.figures)}`
      : asked.action === 'widen'
        ? `${ctx.actor.name} widened ${name} to ${release.share} %${reason ? `: ${reason}` : ''}`
        : `${ctx.actor.name} ${ACTION_WORDS[asked.action]} ${name}${reason ? `: ${reason}` : ''}`,
    details: {
      fromState: from,
      toState: to,
      share: release.share,
      reason,
      ...(asked.action === 'stop' ? { by: stoppedBy, rule: trip?.rule ?? null, figures: trip?.figures ?? null } : {}),
    },
  });

  if (trip) {
    const mail = await tripMail(t, release, modelName, trip.figures, reason ?? '');
    const releaseId = release.id;
    t.afterCommit(() => {
      ctx.log?.warn({ releaseId, reason }, 'release tripped');
      ctx.mailer.send(mail).catch((err) => ctx.log?.error({ err, releaseId }, 'trip e-mail not sent'));
    });
  }
  return release;
}

/** A median shift in the mail's words: "−50 %", "+3.5 °C", "+2.5 points", or "not judged". */
function shiftText(x: number | null, unit: '%' | '°C' | 'points'): string {
  if (x === null) return 'not judged';
  const sign = x > 0 ? '+' : x < 0 ? '−' : '';
  const v = Math.abs(x);
  return unit === '°C' ? `${sign}${Number(v.toFixed(1))} °C` : `${sign}${Number((v * 100).toFixed(1))}${unit === '%' ? ' %' : ' percentage points'}`;
}

/** The release's signatures against its model's rule, for the start_pilot guard. */
async function signaturesOf(t: Transaction, release: Release): Promise<{ have: number; needs: number; missing: string[] }> {
  const model = await LoggerModel.findByPk(release.modelId, { transaction: t, attributes: ['signingThreshold'] });
  const manifest = (await Release.findByPk(release.id, { transaction: t, attributes: ['manifest'] }))!.manifest;
  const signing = await releaseSigning(Release.sequelize!, { id: release.id, manifest }, model?.signingThreshold ?? 1, t);
  const revoked = signing.revokedSigners.length ? ` (not counted: ${signing.revokedSigners.map((k) => `"${k.name}" ${k.keyId}, revoked`).join('; ')})` : '';
  return { have: signing.signedBy.length, needs: signing.threshold, missing: [...signing.missing.map((k) => `"${k.name}" ${k.keyId}`), ...(revoked ? [revoked.trim()] : [])] };
}

/** The trip e-mail to the admins and release engineers; sent only once the stop has committed. */
async function tripMail(t: Transaction, release: Release, modelName: string, figures: TripFigures, reason: string): Promise<Mail> {
  const recipients = await User.findAll({
    where: { role: [...TRIP_MAIL_ROLES], disabledAt: null },
    attributes: ['email'],
    order: [['email', 'ASC']],
    transaction: t,
  });
  const tally =
    figures.rule === 'failure_ratio'
      ? `Installs so far: ${figures.installed} installed, ${figures.failed} failed (transient failures not counted).`
      : figures.rule === 'measurement_drift'
        ? `Median shifts after the install against the days before it: energy against the clear-sky model ${shiftText(figures.energyShift, '%')} over ${figures.energyLoggers} loggers, probe temperature above the expected air temperature ${shiftText(figures.tempShiftC, '°C')} over ${figures.tempLoggers}, flagged probe readings ${shiftText(figures.flaggedShift, 'points')} over ${figures.flaggedLoggers}; weather taken out by ${figures.controls} loggers that did not install it. Check a drifted logger's readings against a meter before resuming.`
        : `Watchdog and brown-out resets: ${figures.resetsAfter} over ${Number(figures.loggerDaysAfter.toFixed(1))} logger-days on this release (${figures.loggers} loggers), ${figures.resetsBefore} over ${Number(figures.loggerDaysBefore.toFixed(1))} logger-days before it.`;
  const text = [
    `Heliodor stopped release ${release.version} of ${modelName} automatically: it tripped.`,
    '',
    reason,
    '',
    tally,
    'No logger is offered this release until it is resumed or withdrawn. Open the release in the console to decide.',
  ].join('\n');
  return { to: recipients.map((r) => r.email), subject: `Release ${release.version} of ${modelName} tripped: ${tripHeadline(figures)}`, text };
}
