// Why one logger lacks the current release of its channel, from the offer decision for that release
// (server/rollout/decision.ts): the lagging loggers' summary (summaries.ts) stores it, and the lagging
// sites read it.
import type { OfferDecision, ReasonCode } from '../rollout/decision';
import type { LaggingReason } from '../../schemas/fleet';

const REASON_OF: Partial<Record<ReasonCode, LaggingReason>> = {
  low_supply: 'low_supply',
  board_not_supported: 'board_not_supported',
  outside_daylight_window: 'outside_daylight_window',
  outside_share: 'outside_share',
  not_pilot_site: 'not_pilot_site',
  not_live: 'release_not_live',
  failed_awaiting_retry: 'failed_awaiting_retry',
  needs_stepping_stone: 'needs_stepping_stone',
  security_counter_too_low: 'security_counter_too_low',
  manifest_expired: 'manifest_expired',
  offered: 'offered',
  stepping_stone: 'offered',
  superseded: 'offered',
};

/** What the reason needs beside the decision: whether the logger is silent, and the release it lacks. */
export type BehindFacts = { silent: boolean; currentId: string; currentVersion: string };

/** Why one logger lacks the current release: silent first, else the decision's verdict for that release. */
export function reasonOf(row: BehindFacts, decision: OfferDecision | undefined): { reason: LaggingReason; detail: string } {
  if (row.silent) return { reason: 'silent', detail: 'No check-in for 3 intervals; nothing reaches the logger until it checks in again.' };
  const verdict = decision?.considered.find((v) => v.releaseId === row.currentId);
  if (!verdict) return { reason: 'other', detail: 'The release was not considered.' };
  // A guard that blocks the release chosen instead (a stepping stone, or a newer pilot) is what holds the logger now.
  if (verdict.reason === 'needs_stepping_stone' || verdict.reason === 'superseded') {
    const guard = decision!.considered.find((v) => v.reason === 'low_supply' || v.reason === 'outside_daylight_window');
    if (guard) return { reason: REASON_OF[guard.reason]!, detail: guard.detail };
  }
  return { reason: REASON_OF[verdict.reason] ?? 'other', detail: verdict.detail };
}
