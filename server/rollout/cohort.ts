// Rollout share cohorts (DEVICE_API.md "Who gets an offer", rule 3). Pure: no I/O.
//
// Each (logger, release) pair lands in a fixed bucket 0–9 999. A release in the widening state offers
// to a logger when its bucket is below share × 100, so widening the share only ever adds loggers, and
// the bucket depends on the release too, so the same loggers are not always the first to take a new
// release.
import { createHash } from 'node:crypto';

/** Number of buckets: one per hundredth of a percent of the fleet. */
export const BUCKETS = 10_000;

/**
 * The logger's bucket for a release: the first 4 bytes of SHA-256(`<logger id>:<release id>`) read as
 * an unsigned big-endian integer, mod 10 000. Ids are the lowercase canonical UUID text the device API
 * and the console API both use; they are lower-cased here so a stray upper-case id cannot move a logger.
 */
export function bucketOf(loggerId: string, releaseId: string): number {
  const digest = createHash('sha256').update(`${loggerId.toLowerCase()}:${releaseId.toLowerCase()}`, 'utf8').digest();
  return digest.readUInt32BE(0) % BUCKETS;
}

/**
 * Whether a bucket is inside a rollout share given in percent (0–100, fractional allowed: 2.5 % → the
 * 250 buckets 0–249). The threshold is rounded to a millionth of a bucket so that binary floating
 * point (0.1 × 100 = 10.000000000000002) cannot let in one bucket too many.
 */
export function inShare(bucket: number, sharePercent: number): boolean {
  return bucket < shareThreshold(sharePercent);
}

/** share × 100, the first bucket outside the share (0 for a share that is not a number). */
export function shareThreshold(sharePercent: number): number {
  if (!Number.isFinite(sharePercent)) return 0;
  return Math.round(sharePercent * 100 * 1e6) / 1e6;
}

/**
 * The smallest whole-percent share that includes this bucket: bucket < share × 100 holds first at
 * ⌊bucket / 100⌋ + 1 %. It is what an installer is told ("offered once the share reaches 68 %").
 */
export function wholeShareIncluding(bucket: number): number {
  return Math.floor(bucket / 100) + 1;
}
