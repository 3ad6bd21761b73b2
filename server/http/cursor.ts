// Page cursors: opaque to clients, strict on the way back. A cursor is a base64url (RFC 4648 §5, no
// padding) JSON array of strings that this server wrote; one it did not write — hand-edited, truncated,
// or holding a value PostgreSQL would refuse (a date such as 2026-02-30, a malformed id) — is answered
// 400 by the caller before any of it reaches a query.

/** The cursor text for the given parts. */
export function encodeCursorParts(parts: readonly string[]): string {
  return Buffer.from(JSON.stringify(parts), 'utf8').toString('base64url');
}

/**
 * The parts of a cursor this server wrote, or null: base64url in its canonical form (Node's decoder
 * skips characters it does not know, so the text must re-encode to itself), a JSON array of exactly
 * `count` strings, none holding a NUL (PostgreSQL text cannot).
 */
export function decodeCursorParts(text: string, count: number): string[] | null {
  if (!/^[A-Za-z0-9_-]+$/.test(text)) return null;
  const bytes = Buffer.from(text, 'base64url');
  if (bytes.toString('base64url') !== text) return null;
  let parsed: unknown;
  try {
    parsed = JSON.parse(new TextDecoder('utf-8', { fatal: true }).decode(bytes));
  } catch {
    return null;
  }
  if (!Array.isArray(parsed) || parsed.length !== count) return null;
  if (!parsed.every((p): p is string => typeof p === 'string' && !p.includes('\u0000'))) return null;
  return parsed;
}

/** A lowercase UUID as PostgreSQL writes one (RFC 9562 §4 layout). */
export const UUID_TEXT = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/;

const TIMESTAMP_TEXT = /^(\d{4})-(\d{2})-(\d{2})[ T](\d{2}):(\d{2}):(\d{2})(\.\d{1,6})?(?:([+-])(\d{2})(?::?(\d{2}))?|Z)?$/;

/**
 * A timestamp as PostgreSQL writes timestamptz text ("2026-03-01 10:00:00.123456+00"), with a real
 * calendar day (2026-02-30 is not one; leap years by the Gregorian rule), a clock time within the day
 * and an offset PostgreSQL accepts (within ±15:59).
 */
export function isTimestampText(at: string): boolean {
  const m = TIMESTAMP_TEXT.exec(at);
  if (!m) return false;
  const [year, month, day, hour, minute, second] = [m[1], m[2], m[3], m[4], m[5], m[6]].map(Number);
  const offsetHour = Number(m[9] ?? '0');
  const offsetMinute = Number(m[10] ?? '0');
  if (year < 1 || month < 1 || month > 12 || day < 1) return false;
  const date = new Date(0);
  date.setUTCFullYear(year, month - 1, day); // years below 100 stay themselves (Date.UTC would add 1900)
  if (date.getUTCFullYear() !== year || date.getUTCMonth() !== month - 1 || date.getUTCDate() !== day) return false;
  return hour < 24 && minute < 60 && second < 60 && offsetHour < 16 && offsetMinute < 60;
}
