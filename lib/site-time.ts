// Times that belong to a site (its daylight window, lagging since, last contact, a logger's timeline,
// site notes) are read on site: in the site's own time zone, with the zone's abbreviation, e.g.
// "2026-03-29 06:42 BST". The zone's rules are the IANA tz database's as the runtime's Intl carries them
// (docs/SOURCES.md §18); the abbreviation is Intl's `timeZoneName: 'short'` in British English, which
// names the European zones (GMT, BST, CET, CEST); other regions' names come from their own English
// locale (AEST, EDT), and a zone without letters reads as an offset (GMT-3).
// One helper for the console and the server (the daylight window's sentence): pure, no I/O.

type When = string | Date;

/**
 * English locales tried in turn for the zone's abbreviation: CLDR gives each locale names only for its
 * own region's zones (en-GB: GMT, BST, CET, CEST; en-US: EST, PDT; en-AU: AEST, NZDT; en-IN: IST;
 * en-ZA: SAST). The first that names the zone wins; with none, the offset form ("GMT-3") stays, as the
 * tz database itself writes numeric abbreviations ("-03") for zones without letters.
 */
const NAMING_LOCALES = ['en-GB', 'en-US', 'en-AU', 'en-IN', 'en-ZA'] as const;
const OFFSET_FORM = /^GMT[+\-\u2212]/;

const formats = new Map<string, Intl.DateTimeFormat>();

function formatIn(locale: string, timeZone: string): Intl.DateTimeFormat {
  const key = `${locale} ${timeZone}`;
  let f = formats.get(key);
  if (!f) {
    f = new Intl.DateTimeFormat(locale, {
      timeZone,
      year: 'numeric',
      month: '2-digit',
      day: '2-digit',
      hour: '2-digit',
      minute: '2-digit',
      hourCycle: 'h23',
      timeZoneName: 'short',
    });
    formats.set(key, f);
  }
  return f;
}

const asDate = (at: When) => (typeof at === 'string' ? new Date(at) : at);

export type SiteTimeParts = { date: string; clock: string; zone: string };

const partOf = (parts: Intl.DateTimeFormatPart[], type: Intl.DateTimeFormatPartTypes) => parts.find((p) => p.type === type)?.value ?? '';

/** True when the runtime's tz data knows the zone (an IANA name such as "Europe/London"). */
export function knownTimeZone(timeZone: string): boolean {
  try {
    formatIn('en-GB', timeZone);
    return true;
  } catch {
    return false;
  }
}

/** The wall-clock date ("2026-03-29"), time ("06:42") and zone abbreviation ("BST") at the site. An unknown zone reads as UTC. */
export function siteTimeParts(at: When, timeZone: string): SiteTimeParts {
  const zone = knownTimeZone(timeZone) ? timeZone : 'UTC';
  const instant = asDate(at);
  const parts = formatIn('en-GB', zone).formatToParts(instant);
  let name = partOf(parts, 'timeZoneName');
  for (const locale of NAMING_LOCALES.slice(1)) {
    if (!OFFSET_FORM.test(name)) break;
    const other = partOf(formatIn(locale, zone).formatToParts(instant), 'timeZoneName');
    if (!OFFSET_FORM.test(other)) name = other;
  }
  return { date: `${partOf(parts, 'year')}-${partOf(parts, 'month')}-${partOf(parts, 'day')}`, clock: `${partOf(parts, 'hour')}:${partOf(parts, 'minute')}`, zone: name };
}

/** "06:42 BST": the time of day at the site. */
export function siteClock(at: When, timeZone: string): string {
  const p = siteTimeParts(at, timeZone);
  return `${p.clock} ${p.zone}`;
}

/** "2026-03-29 06:42 BST": date and time at the site. */
export function siteDateTime(at: When, timeZone: string): string {
  const p = siteTimeParts(at, timeZone);
  return `${p.date} ${p.clock} ${p.zone}`;
}

/** "2026-03-29 05:42 UTC": the same instant in UTC (shown beside the site's time on wide screens). */
export function utcDateTime(at: When): string {
  return asDate(at).toISOString().slice(0, 16).replace('T', ' ') + ' UTC';
}

/** "05:42 UTC". */
export function utcClock(at: When): string {
  return asDate(at).toISOString().slice(11, 16) + ' UTC';
}
