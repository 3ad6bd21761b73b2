// A logger's status as a word and a colour (never colour alone): registered → enrolled, then online or
// not heard from (no check-in for three intervals); retired.
import type { Tone } from './theme';
import { LOGGER_STATUS_WORDS } from './words';

export type StatusInput = { status: 'registered' | 'enrolled' | 'retired'; online?: boolean };

export function loggerStatus({ status, online }: StatusInput): { label: string; tone: Tone } {
  return LOGGER_STATUS_WORDS[status === 'enrolled' && online ? 'online' : status];
}

/**
 * Online, for list rows that do not say: enrolled and seen within three check-in intervals of its model
 * (the same rule the server applies to a logger's detail and the overview).
 */
export function withOnline<R extends StatusInput & { modelId: string; lastSeenAt: string | null }>(
  row: R,
  checkInIntervalS: Record<string, number>,
  now: Date = new Date(),
): R & { online: boolean } {
  if (typeof row.online === 'boolean') return { ...row, online: row.online };
  const interval = checkInIntervalS[row.modelId];
  const seen = row.lastSeenAt ? Date.parse(row.lastSeenAt) : NaN;
  const online = row.status === 'enrolled' && interval !== undefined && Number.isFinite(seen) && now.getTime() - seen <= 3 * interval * 1000;
  return { ...row, online };
}
