// Site-local times through Intl's IANA tz data. Each expected value is worked out by hand from the tz
// database's rules (docs/SOURCES.md §18), not from the code under test:
// - Europe/London, file `europe`: `Zone Europe/London 0:00 EU GMT/BST`, with `Rule EU 1981 max - Mar
//   lastSun 1:00u 1:00 S` and `Rule EU 1996 max - Oct lastSun 1:00u 0 -`: summer time starts and ends
//   at 01:00 UTC on the last Sunday of March and of October — in 2026 the 29 March and the 25 October.
// - Australia/Sydney, file `australasia`: `Zone Australia/Sydney 10:00 AN AE%sT`, with `Rule AN 2008 max -
//   Apr Sun>=1 2:00s 0 S` and `Rule AN 2008 max - Oct Sun>=1 2:00s 1:00 D`: at 02:00 standard time
//   (16:00 UTC the day before) on the first Sunday of April (5 April 2026) and of October (4 October 2026).
// - Europe/Paris, file `europe`: `Zone Europe/Paris 1:00 EU CE%sT` (the EU rules above, one hour ahead).
// - America/Santiago, file `southamerica`: `Zone America/Santiago -4:00 Chile -04/-03`: no letters, so
//   the offset is the name.
import { siteClock, siteDateTime, siteTimeParts, utcDateTime, knownTimeZone } from '../../lib/site-time';

describe('Europe/London across the 2026 changes (EU rules, 01:00 UTC)', () => {
  test('when it is a second before 01:00 UTC on 29 March, then the site reads 00:59 GMT', () => {
    expect(siteDateTime('2026-03-29T00:59:59Z', 'Europe/London')).toBe('2026-03-29 00:59 GMT');
  });
  test('when it is 01:00 UTC on 29 March, then clocks have gone forward: 02:00 BST (01:00–01:59 local never happens)', () => {
    expect(siteDateTime('2026-03-29T01:00:00Z', 'Europe/London')).toBe('2026-03-29 02:00 BST');
  });
  test('when it is a second before 01:00 UTC on 25 October, then the site reads 01:59 BST', () => {
    expect(siteDateTime('2026-10-25T00:59:59Z', 'Europe/London')).toBe('2026-10-25 01:59 BST');
  });
  test('when it is 01:00 UTC on 25 October, then clocks have gone back: 01:00 GMT (the hour 01:00–01:59 comes twice)', () => {
    expect(siteDateTime('2026-10-25T01:00:00Z', 'Europe/London')).toBe('2026-10-25 01:00 GMT');
  });
  test('when a summer morning is shown, then the clock and the UTC line differ by the hour of BST', () => {
    expect(siteClock('2026-06-21T05:42:00Z', 'Europe/London')).toBe('06:42 BST');
    expect(utcDateTime('2026-06-21T05:42:00Z')).toBe('2026-06-21 05:42 UTC');
  });
});

describe('Australia/Sydney, southern hemisphere (AN rules, 02:00 standard time)', () => {
  test('when it is a second before 16:00 UTC on 4 April, then it is still summer time: 02:59 AEDT on the 5th', () => {
    expect(siteDateTime('2026-04-04T15:59:59Z', 'Australia/Sydney')).toBe('2026-04-05 02:59 AEDT');
  });
  test('when it is 16:00 UTC on 4 April, then clocks have gone back to standard time: 02:00 AEST', () => {
    expect(siteDateTime('2026-04-04T16:00:00Z', 'Australia/Sydney')).toBe('2026-04-05 02:00 AEST');
  });
  test('when it is a second before 16:00 UTC on 3 October, then 01:59 AEST on the 4th', () => {
    expect(siteDateTime('2026-10-03T15:59:59Z', 'Australia/Sydney')).toBe('2026-10-04 01:59 AEST');
  });
  test('when it is 16:00 UTC on 3 October, then clocks have gone forward: 03:00 AEDT', () => {
    expect(siteDateTime('2026-10-03T16:00:00Z', 'Australia/Sydney')).toBe('2026-10-04 03:00 AEDT');
  });
  test('when the site is in January (southern summer), then it is UTC+11, while London in January is UTC+0', () => {
    expect(siteClock('2026-01-15T12:00:00Z', 'Australia/Sydney')).toBe('23:00 AEDT');
    expect(siteClock('2026-01-15T12:00:00Z', 'Europe/London')).toBe('12:00 GMT');
  });
});

describe('other zones and inputs', () => {
  test('when the site is in Paris in winter and summer, then CET and CEST', () => {
    expect(siteClock('2026-01-15T05:42:00Z', 'Europe/Paris')).toBe('06:42 CET');
    expect(siteClock('2026-07-15T05:42:00Z', 'Europe/Paris')).toBe('07:42 CEST');
  });
  test('when the zone has no letters in the tz database (America/Santiago), then the offset names it', () => {
    // Chile rules: southern summer time in January, UTC−3.
    expect(siteTimeParts('2026-01-15T12:00:00Z', 'America/Santiago')).toEqual({ date: '2026-01-15', clock: '09:00', zone: 'GMT-3' });
  });
  test('when the instant comes as a Date or as RFC 3339 text, then the answer is the same', () => {
    expect(siteDateTime(new Date('2026-03-29T01:00:00Z'), 'Europe/London')).toBe(siteDateTime('2026-03-29T01:00:00.000Z', 'Europe/London'));
  });
  test('when the zone is not an IANA name, then it is not known and the time reads in UTC', () => {
    expect(knownTimeZone('Aldmere/Vale')).toBe(false);
    expect(knownTimeZone('Europe/London')).toBe(true);
    expect(siteDateTime('2026-03-29T01:00:00Z', 'Aldmere/Vale')).toBe('2026-03-29 01:00 UTC');
  });
});
