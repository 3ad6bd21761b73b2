// The release lifecycle, the complete table. Pure: no I/O.
//
//   draft     → pilot (start_pilot); or deleted (a DELETE, not a transition: see canDelete)
//   pilot     → widening (widen, share 1–99 %), complete, paused, stopped, withdrawn
//   widening  → widening (widen to a larger share only), complete (= 100 %), paused, stopped, withdrawn
//   complete  → paused, stopped, withdrawn
//   paused    → resume (back to the state it was paused from), stopped, withdrawn
//   stopped   → resume (back to the state before the stop; reason required), withdrawn
//   withdrawn is final (loggers that installed it keep it)
//
// Share: pilot 0 (only pilot sites), widening 1–99, complete 100; paused and stopped keep the share
// they had, so resuming restores the same cohort. A person stops a release in the console; the trip
// rule stops it by itself (trip.ts) — the same action, written by server/releases/transitions.ts.
import { LIVE_STATES, RELEASE_ACTION_WORDS, type LiveState, type ReleaseAction, type ReleaseState, type ResumeState } from '../../schemas/words';

import { MAX_WIDEN_SHARE, MIN_WIDEN_SHARE } from '../../lib/share';
export type { LiveState, ReleaseAction, ReleaseState, ResumeState };

export type ReleaseLifecycle = {
  state: ReleaseState;
  /** Rollout share in percent (0–100). */
  share: number;
  /** Set while paused or stopped: where resume leads. Null in every other state. */
  resumeState: ResumeState | null;
};

export type TransitionOptions = {
  share?: number | null;
  reason?: string | null;
  /**
   * For start_pilot: the release's valid signatures by distinct registered, unrevoked keys, against the
   * model's signing rule (server/releases/signing.ts). A pilot needs `have` ≥ `needs`.
   */
  signatures?: { have: number; needs: number; missing?: readonly string[] } | null;
};

export type TransitionRefusal =
  /** The action is not legal in this state (answer 409, naming the allowed actions). */
  | { ok: false; code: 'illegal'; detail: string; allowedActions: ReleaseAction[] }
  /** Stop, withdraw and resume from stopped need a reason (answer 400). */
  | { ok: false; code: 'reason_required'; detail: string; allowedActions: ReleaseAction[] }
  /** Widen needs a share of 1–99 %, larger than the current one when already widening (answer 400). */
  | { ok: false; code: 'invalid_share'; detail: string; allowedActions: ReleaseAction[] }
  /** A pilot needs the model's signing rule met: k valid signatures by distinct unrevoked keys (answer 409). */
  | { ok: false; code: 'signatures_short'; detail: string; allowedActions: ReleaseAction[] };

export type TransitionResult = { ok: true; release: ReleaseLifecycle } | TransitionRefusal;

const TABLE: Record<ReleaseState, readonly ReleaseAction[]> = {
  draft: ['start_pilot'],
  pilot: ['widen', 'complete', 'pause', 'stop', 'withdraw'],
  widening: ['widen', 'complete', 'pause', 'stop', 'withdraw'],
  complete: ['pause', 'stop', 'withdraw'],
  paused: ['resume', 'stop', 'withdraw'],
  stopped: ['resume', 'withdraw'],
  withdrawn: [],
};

/**
 * The release columns stamped the first time a state is entered (never moved by a later entry):
 * when the pilot started, the rollout first widened, completed, and first stopped.
 */
export const FIRST_ENTERED = {
  pilot: 'pilotedAt',
  widening: 'widenedAt',
  complete: 'completedAt',
  stopped: 'stoppedAt',
} as const satisfies Partial<Record<ReleaseState, string>>;
export type FirstEnteredColumn = (typeof FIRST_ENTERED)[keyof typeof FIRST_ENTERED];

/** The column to stamp when a release moves from `from` to `to`, if it has not been stamped before (null: none). */
export function firstEnteredColumn(from: ReleaseState, to: ReleaseState): FirstEnteredColumn | null {
  if (from === to) return null;
  return (FIRST_ENTERED as Partial<Record<ReleaseState, FirstEnteredColumn>>)[to] ?? null;
}

export function isLive(state: ReleaseState): state is LiveState {
  return (LIVE_STATES as readonly string[]).includes(state);
}

export function allowedActions(state: ReleaseState): ReleaseAction[] {
  return [...TABLE[state]];
}

/** Only a draft may be deleted (DELETE /api/releases/:id frees the version); every later state keeps its history. */
export function canDelete(state: ReleaseState): boolean {
  return state === 'draft';
}

/** Whether the action needs a reason when taken from this state. */
export function reasonRequired(state: ReleaseState, action: ReleaseAction): boolean {
  return action === 'stop' || action === 'withdraw' || (action === 'resume' && state === 'stopped');
}

/** The live state a share stands for: 0 pilot, 100 complete, anything between widening. */
function liveStateForShare(share: number): LiveState {
  if (share <= 0) return 'pilot';
  if (share >= 100) return 'complete';
  return 'widening';
}

export function transition(release: ReleaseLifecycle, action: ReleaseAction, options: TransitionOptions = {}): TransitionResult {
  const allowed = allowedActions(release.state);
  if (!allowed.includes(action)) {
    const detail =
      allowed.length === 0
        ? `A ${release.state} release is final: no action is possible.`
        : `${RELEASE_ACTION_WORDS[action]} is not possible for a ${release.state} release; it can: ${allowed.map((a) => `“${RELEASE_ACTION_WORDS[a]}”`).join(', ')}.`;
    return { ok: false, code: 'illegal', detail, allowedActions: allowed };
  }

  const reason = options.reason?.trim() ?? '';
  if (reasonRequired(release.state, action) && reason === '') {
    const what = action === 'resume' ? 'Resuming a stopped release' : action === 'stop' ? 'A stop' : 'A withdrawal';
    return { ok: false, code: 'reason_required', detail: `${what} needs a reason.`, allowedActions: allowed };
  }

  switch (action) {
    case 'start_pilot': {
      const signed = options.signatures;
      if (signed && signed.have < signed.needs) {
        const missing = signed.missing?.length ? ` Keys that have not signed: ${signed.missing.join(', ')}.` : '';
        return {
          ok: false,
          code: 'signatures_short',
          detail: `The pilot needs signatures by ${signed.needs} distinct registered keys that are not revoked; this release has ${signed.have}. Add signatures (heliodor sign … | heliodor push --add-signature) first.${missing}`,
          allowedActions: allowed,
        };
      }
      return ok({ state: 'pilot', share: 0, resumeState: null });
    }
    case 'widen': {
      const share = options.share;
      if (typeof share !== 'number' || !Number.isFinite(share) || share < MIN_WIDEN_SHARE || share > MAX_WIDEN_SHARE) {
        return refuseShare(`Widen needs a share from ${MIN_WIDEN_SHARE} to ${MAX_WIDEN_SHARE} %; use “Complete” for 100 %.`, allowed);
      }
      if (release.state === 'widening' && share <= release.share) {
        return refuseShare(`The share can only grow: it is ${release.share} % now, so widen needs more than that.`, allowed);
      }
      return ok({ state: 'widening', share, resumeState: null });
    }
    case 'complete':
      return ok({ state: 'complete', share: 100, resumeState: null });
    case 'pause':
      // Only live states may pause (the table), so the state paused from is a live state.
      return ok({ state: 'paused', share: release.share, resumeState: release.state as LiveState });
    case 'stop':
      return ok({ state: 'stopped', share: release.share, resumeState: release.state as LiveState | 'paused' });
    case 'resume': {
      // A stop of a paused release resumes to paused; that pause then resumes to the live state its share stands for.
      const back: ResumeState = release.resumeState ?? liveStateForShare(release.share);
      if (back === 'paused') return ok({ state: 'paused', share: release.share, resumeState: liveStateForShare(release.share) });
      return ok({ state: back, share: release.share, resumeState: null });
    }
    case 'withdraw':
      return ok({ state: 'withdrawn', share: release.share, resumeState: null });
  }
}

function ok(release: ReleaseLifecycle): TransitionResult {
  return { ok: true, release };
}

function refuseShare(detail: string, allowed: ReleaseAction[]): TransitionRefusal {
  return { ok: false, code: 'invalid_share', detail, allowedActions: allowed };
}
