// Formatting shared by screens. Pure functions: tests call them directly.
export function relativeTime(iso: string | Date, now: Date = new Date()): string {
  const t = typeof iso === 'string' ? new Date(iso) : iso;
  const s = Math.round((now.getTime() - t.getTime()) / 1000);
  if (Number.isNaN(s)) return '—';
  const future = s < 0;
  const a = Math.abs(s);
  const unit = a < 60 ? `${a} s` : a < 3600 ? `${Math.round(a / 60)} min` : a < 86400 ? `${Math.round(a / 3600)} h` : `${Math.round(a / 86400)} d`;
  if (a < 30) return 'just now';
  return future ? `in ${unit}` : `${unit} ago`;
}

export function absoluteTime(iso: string | Date): string {
  const t = typeof iso === 'string' ? new Date(iso) : iso;
  return t.toISOString().replace('T', ' ').slice(0, 16) + ' UTC';
}

/** A duration in the largest two units that matter: "40 s", "25 min", "3 h 10 min", "2 d 4 h" (no break inside a figure). */
export function duration(seconds: number): string {
  const nb = '\u00a0';
  const s = Math.max(0, Math.round(seconds));
  if (s < 60) return `${s}${nb}s`;
  const m = Math.round(s / 60);
  if (m < 60) return `${m}${nb}min`;
  const h = Math.floor(m / 60);
  if (h < 24) return m % 60 ? `${h}${nb}h ${m % 60}${nb}min` : `${h}${nb}h`;
  const d = Math.floor(h / 24);
  return h % 24 ? `${d}${nb}d ${h % 24}${nb}h` : `${d}${nb}d`;
}

/**
 * "as of 12 s ago" for an answer read from a summary the worker keeps (SummaryFreshness), when it is at
 * least `staleS` seconds behind the answer; null while it is fresh (a quiet console catches up at once).
 */
export function summaryAge(ageS: number | null | undefined, staleS = 10): string | null {
  if (ageS === null || ageS === undefined || ageS < staleS) return null;
  const unit = ageS < 60 ? `${ageS} s` : ageS < 3600 ? `${Math.round(ageS / 60)} min` : `${Math.round(ageS / 3600)} h`;
  return `as of ${unit} ago`;
}
