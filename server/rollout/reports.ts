// Install reports (DEVICE_API.md "Install report"). Pure: no I/O.
//
// One row per (logger, release) holds where that logger stands with that release. States only move
// forward: offered < downloading < downloaded < installing < installed, and failed ends an attempt. A
// repeated or older state is accepted and ignored, so a retried check-in never double-counts.
//
// Choices where the contract is silent (also in the OpenAPI document):
// - After a failure with a transient reason (connection, low_supply) the offer stands, so a new attempt
//   may begin: any state other than failed is taken as the start of that attempt. After a permanent
//   failure the release is no longer offered and further reports are ignored — until an operator
//   retries it (retried_at set after the failure), which opens a new attempt the same way.
// - A failed report without a reason is recorded as other; a reason sent with another state is ignored.
// - installed is final for the row, except that the service may turn it into failed (other) when the
//   bootloader rolled back (see `afterInstalled`).
import semver from 'semver';
import { TRANSIENT_FAILURE_REASONS, type FailureReason, type InstallState, type ReportedInstallState } from '../../schemas/words';

/** An install's state as the server keeps it (offered, then what the logger reported). */
export type StoredState = InstallState;

export const STATE_ORDER: Record<InstallState, number> = {
  offered: 0,
  downloading: 1,
  downloaded: 2,
  installing: 3,
  installed: 4,
  failed: 5,
};

export type StoredReport = {
  state: StoredState;
  reason: string | null;
  updatedAt: Date;
  retriedAt: Date | null;
};

export type ReportChange =
  | { apply: false; why: 'repeated' | 'older' | 'after_install' | 'failed_awaiting_retry' }
  | { apply: true; state: ReportedInstallState; reason: FailureReason | null; newAttempt: boolean };

export const ROLLBACK_DETAIL = 'rolled back by the bootloader';

export function isTransient(reason: string | null | undefined): boolean {
  return reason !== null && reason !== undefined && (TRANSIENT_FAILURE_REASONS as readonly string[]).includes(reason);
}

/** Whether an operator's retry came after the row's last change, which opens a new attempt. */
export function retriedSince(row: StoredReport): boolean {
  return row.retriedAt !== null && row.retriedAt.getTime() >= row.updatedAt.getTime();
}

/** What a reported state does to the stored row (null: no row yet). */
export function applyReport(row: StoredReport | null, state: ReportedInstallState, reason?: FailureReason | null): ReportChange {
  const failureReason = state === 'failed' ? (reason ?? 'other') : null;
  if (row === null) return { apply: true, state, reason: failureReason, newAttempt: true };
  if (row.state === 'failed') {
    if (!(isTransient(row.reason) || retriedSince(row))) return { apply: false, why: 'failed_awaiting_retry' };
    if (state === 'failed') {
      // A second failure report of the same attempt: keep the first unless a retry opened a new attempt.
      return retriedSince(row) ? { apply: true, state, reason: failureReason, newAttempt: true } : { apply: false, why: 'repeated' };
    }
    return { apply: true, state, reason: null, newAttempt: true };
  }
  if (row.state === 'installed') {
    if (retriedSince(row)) return { apply: true, state, reason: failureReason, newAttempt: true };
    return { apply: false, why: state === 'installed' ? 'repeated' : 'after_install' };
  }
  if (state === row.state) return { apply: false, why: 'repeated' };
  if (STATE_ORDER[state] < STATE_ORDER[row.state]) return { apply: false, why: 'older' };
  return { apply: true, state, reason: failureReason, newAttempt: false };
}

/** A finished install: installed, or failed for a reason that is not transient. */
export function isFinished(state: StoredState, reason: string | null): boolean {
  return state === 'installed' || (state === 'failed' && !isTransient(reason ?? 'other'));
}

/**
 * A logger that reported installed and checks in again: confirmed when it runs the release's version
 * (or newer); rolled back when it still runs an older one. The check-in that carries the installed
 * report itself may still run the old version (reported just before rebooting into the new image), so
 * it is only a rollback from the next check-in on.
 */
export function afterInstalled(running: string, releaseVersion: string, reportedInThisCheckIn: boolean): 'confirmed' | 'rolled_back' | 'pending' {
  const r = semver.valid(running);
  const v = semver.valid(releaseVersion);
  if (!r || !v) return 'pending';
  if (semver.gte(r, v)) return 'confirmed';
  return reportedInThisCheckIn ? 'pending' : 'rolled_back';
}
