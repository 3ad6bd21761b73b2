import {
  allowedActions,
  canDelete,
  isLive,
  transition,
  type ReleaseAction,
  type ReleaseLifecycle,
  type ReleaseState,
} from '../../server/rollout/lifecycle';
import { RELEASE_ACTIONS, RELEASE_STATES } from '../../schemas/words';
import { ALLOWED_ACTIONS } from '../helpers/lifecycle-table';

// Source: the release lifecycle's complete table as the product specifies it, written out here by hand
// (not read from lifecycle.ts):
// draft → pilot (start_pilot) or deleted; pilot → widening (widen, 1–99 %), complete, paused, stopped,
// withdrawn; widening → widening (larger share only), complete (= 100 %), paused, stopped, withdrawn;
// paused → resume (to the state it was paused from), stopped, withdrawn; stopped → resume (to the state
// before the stop; reason required), withdrawn; complete → paused, stopped, withdrawn; withdrawn is final.
// Any other pair is refused (409) naming the allowed actions.

const start: Record<ReleaseState, ReleaseLifecycle> = {
  draft: { state: 'draft', share: 0, resumeState: null },
  pilot: { state: 'pilot', share: 0, resumeState: null },
  widening: { state: 'widening', share: 25, resumeState: null },
  complete: { state: 'complete', share: 100, resumeState: null },
  paused: { state: 'paused', share: 25, resumeState: 'widening' },
  stopped: { state: 'stopped', share: 25, resumeState: 'widening' },
  withdrawn: { state: 'withdrawn', share: 25, resumeState: null },
};

const allowed = ALLOWED_ACTIONS;

/** Expected result of each legal pair, given the start rows above, share 50 for widen and a reason. */
const legal: Partial<Record<`${ReleaseState}:${ReleaseAction}`, ReleaseLifecycle>> = {
  'draft:start_pilot': { state: 'pilot', share: 0, resumeState: null },
  'pilot:widen': { state: 'widening', share: 50, resumeState: null },
  'pilot:complete': { state: 'complete', share: 100, resumeState: null },
  'pilot:pause': { state: 'paused', share: 0, resumeState: 'pilot' },
  'pilot:stop': { state: 'stopped', share: 0, resumeState: 'pilot' },
  'pilot:withdraw': { state: 'withdrawn', share: 0, resumeState: null },
  'widening:widen': { state: 'widening', share: 50, resumeState: null },
  'widening:complete': { state: 'complete', share: 100, resumeState: null },
  'widening:pause': { state: 'paused', share: 25, resumeState: 'widening' },
  'widening:stop': { state: 'stopped', share: 25, resumeState: 'widening' },
  'widening:withdraw': { state: 'withdrawn', share: 25, resumeState: null },
  'complete:pause': { state: 'paused', share: 100, resumeState: 'complete' },
  'complete:stop': { state: 'stopped', share: 100, resumeState: 'complete' },
  'complete:withdraw': { state: 'withdrawn', share: 100, resumeState: null },
  'paused:resume': { state: 'widening', share: 25, resumeState: null },
  'paused:stop': { state: 'stopped', share: 25, resumeState: 'paused' },
  'paused:withdraw': { state: 'withdrawn', share: 25, resumeState: null },
  'stopped:resume': { state: 'widening', share: 25, resumeState: null },
  'stopped:withdraw': { state: 'withdrawn', share: 25, resumeState: null },
};

const pairs = RELEASE_STATES.flatMap((state) => RELEASE_ACTIONS.map((action) => ({ state, action, expected: legal[`${state}:${action}`] ?? null })));

describe('release lifecycle', () => {
  test('when the table is enumerated, then it covers 7 states × 7 actions', () => {
    expect(pairs).toHaveLength(49);
    expect(Object.keys(legal)).toHaveLength(19);
  });

  test.each(pairs)('when a $state release gets $action, then the result follows the table', ({ state, action, expected }) => {
    const result = transition(start[state], action, { share: 50, reason: 'pilot sites report clean installs' });
    if (expected) {
      expect(result).toEqual({ ok: true, release: expected });
    } else {
      expect(result.ok).toBe(false);
      if (result.ok) return;
      expect(result.code).toBe('illegal');
      expect(result.allowedActions).toEqual(allowed[state]);
    }
  });

  test.each(RELEASE_STATES)('when the allowed actions of a %s release are asked for, then they are the table row', (state) => {
    expect(allowedActions(state)).toEqual(allowed[state]);
  });

  test.each(RELEASE_STATES)('when a %s release is to be deleted, then only a draft may be', (state) => {
    expect(canDelete(state)).toBe(state === 'draft');
  });

  test.each(RELEASE_STATES)('when %s is checked for liveness, then only pilot, widening and complete are live (DEVICE_API.md rule 2)', (state) => {
    expect(isLive(state)).toBe(state === 'pilot' || state === 'widening' || state === 'complete');
  });

  describe('reasons', () => {
    test.each([
      { state: 'pilot' as const, action: 'stop' as const },
      { state: 'widening' as const, action: 'stop' as const },
      { state: 'complete' as const, action: 'withdraw' as const },
      { state: 'paused' as const, action: 'stop' as const },
      { state: 'stopped' as const, action: 'resume' as const },
      { state: 'stopped' as const, action: 'withdraw' as const },
    ])('when a $state release gets $action without a reason, then it is refused as reason_required', ({ state, action }) => {
      for (const reason of [undefined, null, '', '   ']) {
        const result = transition(start[state], action, { reason });
        expect(result).toMatchObject({ ok: false, code: 'reason_required' });
      }
    });

    test.each([
      { state: 'pilot' as const, action: 'pause' as const },
      { state: 'paused' as const, action: 'resume' as const },
      { state: 'draft' as const, action: 'start_pilot' as const },
      { state: 'widening' as const, action: 'complete' as const },
    ])('when a $state release gets $action without a reason, then it goes ahead (no reason required)', ({ state, action }) => {
      expect(transition(start[state], action, {}).ok).toBe(true);
    });

    test('when an illegal action also lacks a reason, then the refusal is illegal (409 before 400)', () => {
      expect(transition(start.withdrawn, 'stop', {})).toMatchObject({ ok: false, code: 'illegal', allowedActions: [] });
    });
  });

  describe('shares', () => {
    test.each([
      { from: 'pilot' as const, share: 1, ok: true },
      { from: 'pilot' as const, share: 5, ok: true },
      { from: 'pilot' as const, share: 2.5, ok: true },
      { from: 'pilot' as const, share: 99, ok: true },
      { from: 'pilot' as const, share: 0, ok: false },
      { from: 'pilot' as const, share: 0.5, ok: false },
      { from: 'pilot' as const, share: 100, ok: false },
      { from: 'pilot' as const, share: Number.NaN, ok: false },
      { from: 'pilot' as const, share: undefined, ok: false },
      { from: 'widening' as const, share: 26, ok: true },
      { from: 'widening' as const, share: 25, ok: false },
      { from: 'widening' as const, share: 5, ok: false },
    ])('when a $from release is widened to $share %, then ok is $ok', ({ from, share, ok }) => {
      const result = transition(start[from], 'widen', { share });
      if (ok) expect(result).toEqual({ ok: true, release: { state: 'widening', share, resumeState: null } });
      else expect(result).toMatchObject({ ok: false, code: 'invalid_share' });
    });

    test('when a release goes pilot → 5 % → 25 % → 50 % → complete, then the share follows (the staged rollout of PRODUCT.md journey 3)', () => {
      let release = start.pilot;
      for (const [action, share, expected] of [
        ['widen', 5, 5],
        ['widen', 25, 25],
        ['widen', 50, 50],
        ['complete', undefined, 100],
      ] as const) {
        const result = transition(release, action, { share });
        expect(result.ok).toBe(true);
        if (!result.ok) return;
        expect(result.release.share).toBe(expected);
        release = result.release;
      }
      expect(release.state).toBe('complete');
    });
  });

  describe('resume', () => {
    test.each(['pilot', 'widening', 'complete'] as const)('when a %s release is paused and resumed, then it is back in that state with its share', (live) => {
      const paused = transition(start[live], 'pause');
      expect(paused.ok).toBe(true);
      if (!paused.ok) return;
      const resumed = transition(paused.release, 'resume');
      expect(resumed).toEqual({ ok: true, release: start[live] });
    });

    test.each(['pilot', 'widening', 'complete'] as const)('when a %s release is stopped and resumed with a reason, then it is back in that state', (live) => {
      const stopped = transition(start[live], 'stop', { reason: 'watchdog resets doubled' });
      expect(stopped.ok).toBe(true);
      if (!stopped.ok) return;
      const resumed = transition(stopped.release, 'resume', { reason: 'fix confirmed on the bench' });
      expect(resumed).toEqual({ ok: true, release: start[live] });
    });

    test('when a paused release is stopped, then resume returns to paused, and a second resume to the live state', () => {
      const steps: Array<[ReleaseAction, string | undefined, ReleaseState]> = [
        ['pause', undefined, 'paused'],
        ['stop', 'failures over threshold', 'stopped'],
        ['resume', 'cause found', 'paused'],
        ['resume', undefined, 'widening'],
      ];
      let release = start.widening;
      for (const [action, reason, state] of steps) {
        const result = transition(release, action, { reason });
        expect(result.ok).toBe(true);
        if (!result.ok) return;
        expect(result.release.state).toBe(state);
        expect(result.release.share).toBe(25);
        release = result.release;
      }
    });
  });
});
