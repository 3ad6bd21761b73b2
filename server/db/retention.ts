// How long the check-in history is kept (HELIODOR_CHECKIN_RETENTION_DAYS, default 30 days): the day
// partitions older than this are dropped (server/device-api/partitions.ts), and the reset-rate trip rule
// looks this far back for the rate before a release (server/releases/trip.ts).
export const DEFAULT_RETENTION_DAYS = 30;

export function retentionDays(env: Record<string, string | undefined> = process.env): number {
  const raw = env.HELIODOR_CHECKIN_RETENTION_DAYS;
  const n = raw === undefined || raw === '' ? DEFAULT_RETENTION_DAYS : Number(raw);
  return Number.isInteger(n) && n >= 1 ? n : DEFAULT_RETENTION_DAYS;
}
