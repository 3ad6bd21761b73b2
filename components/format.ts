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
